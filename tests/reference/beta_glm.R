# Beta calibration reference (Kull, Silva Filho and Flach 2017): R stats::glm
# on ln(s) and -ln(1-s). Usage: Rscript beta_glm.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
source(file.path(dirname(sub("^--file=", "", grep("^--file=", commandArgs(), value = TRUE))),
                 "parametric_cases.R"))
cases <- parametric_cases()[c("pima", "biopsy", "sim")]
answers <- NULL
for (name in names(cases)) {
  d <- cases[[name]]
  write_full(d, file.path(out, paste0(name, "_rows.csv")))
  s <- clip(d$score)
  y <- d$label
  w <- d$weight
  x1 <- log(s)
  x2 <- -log1p(-s)
  fitglm <- function(formula) suppressWarnings(glm(formula, family = binomial, weights = w, control = tight))
  # full: logit p = a ln s - b ln(1 - s) + c; a negative a or b is set to 0
  # and the model refitted on the other feature (Kull et al. 2017).
  g <- coef(fitglm(y ~ x1 + x2))
  a <- g[["x1"]]; b <- g[["x2"]]; c <- g[["(Intercept)"]]
  if (a < 0) { g <- coef(fitglm(y ~ x2)); a <- 0; b <- g[["x2"]]; c <- g[["(Intercept)"]] }
  else if (b < 0) { g <- coef(fitglm(y ~ x1)); b <- 0; a <- g[["x1"]]; c <- g[["(Intercept)"]] }
  answers <- rbind(answers, data.frame(case = case_ids[[name]], form = 1, a = a, b = b, c = c))
  # midpoint (m = 1/2): no intercept, features ln(2s) and -ln(2(1 - s)).
  m1 <- log(2 * s)
  m2 <- -log(2 * (1 - s))
  g <- coef(fitglm(y ~ 0 + m1 + m2))
  a <- g[["m1"]]; b <- g[["m2"]]
  if (a < 0) { a <- 0; b <- coef(fitglm(y ~ 0 + m2))[["m2"]] }
  else if (b < 0) { b <- 0; a <- coef(fitglm(y ~ 0 + m1))[["m1"]] }
  answers <- rbind(answers, data.frame(case = case_ids[[name]], form = 2, a = a, b = b, c = (a - b) * log(2)))
  # shared (a = b): logistic regression on the log-odds x1 + x2 with intercept.
  z <- x1 + x2
  g <- coef(fitglm(y ~ z))
  answers <- rbind(answers, data.frame(case = case_ids[[name]], form = 3, a = g[["z"]], b = g[["z"]],
                                       c = g[["(Intercept)"]]))
}
write_full(answers, file.path(out, "beta_answers.csv"))
