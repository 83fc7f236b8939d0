# Shared case builder for the parametric reference checks (sourced by
# platt_glm.R, beta_glm.R and temperature_optimize.R). Every case is a data
# frame with columns score, label, weight; numbers are written with 17
# significant digits so that the C++ side reads exactly the same doubles.
suppressPackageStartupMessages(library(MASS))

fmt <- function(x) sprintf("%.17g", x)

write_full <- function(df, path) {
  out <- as.data.frame(lapply(df, function(col) if (is.numeric(col)) fmt(col) else col))
  write.table(out, path, sep = ",", quote = FALSE, row.names = FALSE)
}

parametric_cases <- function() {
  # MASS::Pima.te scored by a logistic glm fitted on MASS::Pima.tr.
  pima_fit <- glm(type ~ npreg + glu + bmi + ped + age, family = binomial, data = Pima.tr)
  pima <- data.frame(score = predict(pima_fit, newdata = Pima.te, type = "response"),
                     label = as.numeric(Pima.te$type == "Yes"), weight = 1)
  # The same model's linear predictor: a score on the logit scale.
  pima_logit <- data.frame(score = predict(pima_fit, newdata = Pima.te, type = "link"),
                           label = pima$label, weight = 1)
  # An LDA discriminant (MASS::lda on Pima.tr): a margin with no probability reading.
  pima_lda <- lda(type ~ npreg + glu + bmi + ped + age, data = Pima.tr)
  pima_margin <- data.frame(score = predict(pima_lda, newdata = Pima.te)$x[, 1],
                            label = pima$label, weight = 1)
  # MASS::biopsy without NA rows: glm on V1..V9 fitted on the odd rows,
  # scored on the even rows (scores very close to 0 and 1).
  bx <- na.omit(biopsy)
  odd <- seq(1, nrow(bx), by = 2)
  bfit <- suppressWarnings(glm(class ~ V1 + V2 + V3 + V4 + V5 + V6 + V7 + V8 + V9,
                               family = binomial, data = bx[odd, ]))
  even <- bx[-odd, ]
  biopsy_case <- data.frame(score = predict(bfit, newdata = even, type = "response"),
                            label = as.numeric(even$class == "malignant"), weight = 1)
  # Seeded simulation with weights (some zero): set.seed(20261202).
  set.seed(20261202)
  n <- 1500
  s <- rbeta(n, 2, 3)
  truth <- plogis(1.6 * log(s) - 0.8 * log1p(-s) + 0.9)
  w <- runif(n, 0, 3)
  w[sample.int(n, 150)] <- 0
  sim <- data.frame(score = s, label = as.numeric(runif(n) < truth), weight = w)
  list(pima = pima, pima_logit = pima_logit, pima_margin = pima_margin,
       biopsy = biopsy_case, sim = sim)
}

clip <- function(s) pmin(pmax(s, 1e-12), 1 - 1e-12)

tight <- glm.control(epsilon = 1e-14, maxit = 200)

# Numeric case ids for the answer files (the C++ reader takes numbers only).
case_ids <- c(pima = 1, pima_logit = 2, pima_margin = 3, biopsy = 4, sim = 5)
