# Reference values for the report's metric core (tests/reference/test_metrics_reference.cpp).
# Usage: Rscript metrics_reference.R OUT_DIR
# Writes, per case, OUT_DIR/<case>_rows.csv (forecast, label), <case>_answers.csv
# (one row of named values) and <case>_bins.csv (reliability bins), all with
# 17 significant digits so that the comparison is not limited by the file.
suppressPackageStartupMessages({ library(MASS); library(Iso) })
out <- commandArgs(trailingOnly = TRUE)[1]

fmt <- function(df) {
  for (j in seq_along(df)) df[[j]] <- sprintf("%.17g", as.numeric(df[[j]]))
  df
}
write_full <- function(df, name) {
  write.csv(fmt(df), file.path(out, name), row.names = FALSE, quote = FALSE)
}

clip <- 1e-12
equal_mass_bin <- function(p, k) {
  # Tie groups stay whole; a group goes to bin floor(k * (before + group/2) / n).
  n <- length(p)
  v <- sort(unique(p))
  before <- sapply(v, function(x) sum(p < x))
  group <- sapply(v, function(x) sum(p == x))
  b <- pmin(k - 1, floor(k * (before + group / 2) / n))
  b[match(p, v)]
}
equal_width_bin <- function(p, k) pmin(k - 1, floor(k * p))

describe <- function(name, p, y) {
  write_full(data.frame(forecast = p, label = y), paste0(name, "_rows.csv"))
  n <- length(p)
  pc <- pmin(pmax(p, clip), 1 - clip)
  ans <- list()
  ans$brier <- mean((p - y)^2)
  ans$log_loss <- -mean(y * log(pc) + (1 - y) * log(1 - pc))

  bins <- NULL
  for (kind in c("width", "mass")) {
    b <- if (kind == "width") equal_width_bin(p, 10) else equal_mass_bin(p, 10)
    nb <- tapply(p, b, length); fb <- tapply(p, b, mean); ob <- tapply(y, b, mean)
    gap <- abs(fb - ob)
    ans[[paste0("ece_", kind)]] <- sum(nb / n * gap)
    ans[[paste0("mce_", kind)]] <- max(gap)
    ans[[paste0("l2_plugin_", kind)]] <- sqrt(sum(nb / n * gap^2))
    # Kumar, Liang and Ma (2019): debiased squared l2, per bin minus o(1-o)/(n_b - 1).
    corr <- ifelse(nb > 1, ob * (1 - ob) / (nb - 1), 0)
    ans[[paste0("l2sq_debiased_", kind)]] <- sum(nb / n * (gap^2 - corr))
    # Wilson score interval = prop.test without continuity correction.
    ci <- t(sapply(names(nb), function(g) {
      x <- sum(y[b == as.numeric(g)])
      suppressWarnings(prop.test(x, nb[[g]], correct = FALSE))$conf.int
    }))
    bins <- rbind(bins, data.frame(kind = ifelse(kind == "width", 0, 1), bin = as.numeric(names(nb)),
                                   rows = as.vector(nb), mean_forecast = as.vector(fb),
                                   observed = as.vector(ob), wilson_lo = ci[, 1], wilson_hi = ci[, 2]))
    if (kind == "mass") {
      # Hosmer and Lemeshow (1980) over the same groups, g - 2 degrees of freedom.
      O <- tapply(y, b, sum); E <- tapply(p, b, sum)
      hl <- sum((O - E)^2 / (E * (1 - E / nb)))
      ans$hl_statistic <- hl
      ans$hl_df <- length(nb) - 2
      ans$hl_p <- pchisq(hl, length(nb) - 2, lower.tail = FALSE)
    }
  }
  write_full(bins, paste0(name, "_bins.csv"))

  # Spiegelhalter (1986).
  z <- sum((y - p) * (1 - 2 * p)) / sqrt(sum((1 - 2 * p)^2 * p * (1 - p)))
  ans$spiegelhalter_z <- z
  ans$spiegelhalter_p <- 2 * pnorm(-abs(z))

  # Cox (1958) calibration slope and intercepts, by glm with a tight tolerance.
  lp <- qlogis(pc)
  ctl <- glm.control(epsilon = 1e-14, maxit = 200)
  two <- glm(y ~ lp, family = binomial, control = ctl)
  one <- glm(y ~ 1 + offset(lp), family = binomial, control = ctl)
  ans$slope <- unname(coef(two)[2])
  ans$intercept_free <- unname(coef(two)[1])
  ans$intercept_at_unit_slope <- unname(coef(one)[1])
  ans$citl <- mean(p) - mean(y)

  # CORP (Dimitriadis, Gneiting and Jordan 2021): PAV of y on p with ties
  # pooled first (weighted Iso::pava on distinct forecasts).
  v <- sort(unique(p))
  idx <- match(p, v)
  ymean <- tapply(y, idx, mean); cnt <- tapply(y, idx, length)
  fit <- Iso::pava(as.vector(ymean), as.vector(cnt))
  r <- fit[idx]
  rc <- pmin(pmax(r, clip), 1 - clip)
  o <- mean(y)
  ll <- function(q) -mean(y * log(q) + (1 - y) * log(1 - q))
  ans$corp_brier_mcb <- mean((p - y)^2) - mean((r - y)^2)
  ans$corp_brier_dsc <- mean((o - y)^2) - mean((r - y)^2)
  ans$corp_brier_unc <- mean((o - y)^2)
  ans$corp_log_mcb <- ll(pc) - ll(rc)
  ans$corp_log_dsc <- ll(rep(o, n)) - ll(rc)
  ans$corp_log_unc <- ll(rep(o, n))

  # Hanley and McNeil (1982): AUC = W / (n1 n0), ties counted 1/2 by wilcox.test.
  w <- wilcox.test(p[y == 1], p[y == 0], exact = FALSE)$statistic
  ans$auc <- unname(w) / (sum(y == 1) * sum(y == 0))

  write_full(as.data.frame(ans), paste0(name, "_answers.csv"))
}

# MASS::Pima.te scored by a glm fitted on MASS::Pima.tr.
model <- glm(type ~ npreg + glu + bmi + ped + age, family = binomial, data = Pima.tr)
describe("pima", unname(predict(model, Pima.te, type = "response")),
         as.numeric(Pima.te$type == "Yes"))

# MASS::biopsy without NA rows, glm on V1..V9 fitted on a seeded half, scored on the other half.
bio <- na.omit(biopsy)
set.seed(20240601)
train <- sample(nrow(bio), floor(nrow(bio) / 2))
fit_bio <- glm(class ~ V1 + V2 + V3 + V4 + V5 + V6 + V7 + V8 + V9, family = binomial,
               data = bio[train, ])
test <- bio[-train, ]
describe("biopsy", unname(predict(fit_bio, test, type = "response")),
         as.numeric(test$class == "malignant"))
