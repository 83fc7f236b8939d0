# Platt reference: R stats::glm. Usage: Rscript platt_glm.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
source(file.path(dirname(sub("^--file=", "", grep("^--file=", commandArgs(), value = TRUE))),
                 "parametric_cases.R"))
cases <- parametric_cases()
scales <- c(pima = "probability", pima_logit = "logit", pima_margin = "margin",
            biopsy = "probability", sim = "probability")
answers <- NULL
for (name in names(scales)) {
  d <- cases[[name]]
  write_full(d, file.path(out, paste0(name, "_rows.csv")))
  f <- if (scales[[name]] == "probability") qlogis(clip(d$score)) else d$score
  y <- d$label
  w <- d$weight
  # Without smoothed targets: binomial glm of the 0/1 label on f.
  g0 <- suppressWarnings(glm(y ~ f, family = binomial, weights = w, control = tight))
  # With Platt's (1999) targets t+ = (N+ + 1)/(N+ + 2), t- = 1/(N- + 2),
  # N+- the weighted class totals: quasibinomial glm on the targets.
  np <- sum(w[y == 1])
  nn <- sum(w[y == 0])
  t <- ifelse(y == 1, (np + 1) / (np + 2), 1 / (nn + 2))
  g1 <- glm(t ~ f, family = quasibinomial, weights = w, control = tight)
  for (k in 0:1) {
    g <- if (k == 0) g0 else g1
    # p = 1/(1 + exp(A f + B)), so A = -slope and B = -intercept.
    answers <- rbind(answers, data.frame(case = case_ids[[name]], smoothed = k,
                                         a = -coef(g)[["f"]], b = -coef(g)[["(Intercept)"]]))
  }
}
write_full(answers, file.path(out, "platt_answers.csv"))
