# Drift reference: R's own two-sample Kolmogorov-Smirnov test, a population
# stability index computed directly from R's cut() of two samples, and a
# Poisson bootstrap of the change of four labelled figures, all on invented
# numbers drawn here.
#   - KS: stats::ks.test(x, y, exact = FALSE) (R 4.2: the asymptotic p-value,
#     1 - C_pKS2(sqrt(n m / (n + m)) D), for samples with ties and without);
#   - PSI: sum((a - r) * log(a / r)) over the shares of three fixed bins
#     (cut at 0 and 2), the formula as the credit-scoring trade writes it
#     (Siddiqi 2006, from memory);
#   - bootstrap: each (cell, label) of each side weighted by rpois(1, count),
#     the two sides independently, the change of the observed rate, Brier
#     score, log loss and 10-bin equal-width ECE per replicate, and
#     quantile(type = 7) at 2.5% and 97.5%; also the sd of each change.
# Usage: Rscript drift.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
fmt <- function(x) sprintf("%.17g", x)
set.seed(20261203)

# KS with ties: integer scores (a grid of step 1 on the logit scale).
x1 <- round(rnorm(300, 0, 2))
y1 <- round(rnorm(200, 0.6, 2))
k1 <- suppressWarnings(ks.test(x1, y1, exact = FALSE))
# KS without ties: five decimals (a grid of step 1e-5), repeated values dropped.
x2 <- unique(round(rnorm(250, 0, 1), 5))
y2 <- setdiff(unique(round(rnorm(400, 0.2, 1.1), 5)), x2)
stopifnot(!any(duplicated(c(x2, y2))), length(x2) > 240, length(y2) > 380)
k2 <- ks.test(x2, y2, exact = FALSE)
# The same samples as numeric CSVs of one column each.
write_col <- function(v, name) writeLines(c("v", fmt(v)), file.path(out, name))
write_col(x1, "x1.csv"); write_col(y1, "y1.csv"); write_col(x2, "x2.csv"); write_col(y2, "y2.csv")

# PSI over the pieces of a step map cut at 0 and 2 (x1 the reference, y1 tonight).
breaks <- c(-Inf, 0, 2, Inf)
r <- as.vector(table(cut(x1, breaks, right = TRUE))) / length(x1)
a <- as.vector(table(cut(y1, breaks, right = TRUE))) / length(y1)
psi <- sum((a - r) * log(a / r))

# Bootstrap cells: forecast, negatives and positives per cell of each side.
ref <- data.frame(p = c(0.05, 0.15, 0.3, 0.5, 0.7, 0.9), n0 = c(40, 35, 30, 20, 10, 4), n1 = c(2, 6, 12, 20, 22, 30))
now <- data.frame(p = c(0.05, 0.15, 0.3, 0.5, 0.7, 0.9), n0 = c(30, 28, 25, 15, 9, 3), n1 = c(4, 9, 16, 22, 21, 24))
figs <- function(d, w0, w1) {
  w <- c(w0, w1); y <- c(rep(0, nrow(d)), rep(1, nrow(d))); f <- c(d$p, d$p)
  W <- sum(w)
  brier <- sum(w * (f - y)^2) / W
  ll <- -sum(w * (y * log(f) + (1 - y) * log(1 - f))) / W
  bin <- pmin(floor(f * 10), 9)
  ece <- 0
  for (b in unique(bin)) {
    i <- bin == b
    wb <- sum(w[i])
    if (wb > 0) ece <- ece + wb * abs(sum(w[i] * f[i]) / wb - sum(w[i] * y[i]) / wb)
  }
  c(rate = sum(w * y) / W, brier = brier, log_loss = ll, ece = ece / W)
}
B <- 20000
diffs <- t(replicate(B, {
  a <- figs(ref, rpois(nrow(ref), ref$n0), rpois(nrow(ref), ref$n1))
  b <- figs(now, rpois(nrow(now), now$n0), rpois(nrow(now), now$n1))
  b - a
}))
q <- apply(diffs, 2, quantile, probs = c(0.025, 0.975), type = 7)
s <- apply(diffs, 2, sd)
point <- figs(now, now$n0, now$n1) - figs(ref, ref$n0, ref$n1)
writeLines(c("p,n0,n1", paste(fmt(ref$p), ref$n0, ref$n1, sep = ",")), file.path(out, "ref_cells.csv"))
writeLines(c("p,n0,n1", paste(fmt(now$p), now$n0, now$n1, sep = ",")), file.path(out, "now_cells.csv"))

answers <- c(
  ks1_d = unname(k1$statistic), ks1_p = k1$p.value,
  ks2_d = unname(k2$statistic), ks2_p = k2$p.value,
  psi = psi,
  rate = point[["rate"]], rate_lo = q[1, "rate"], rate_hi = q[2, "rate"], rate_sd = s[["rate"]],
  brier = point[["brier"]], brier_lo = q[1, "brier"], brier_hi = q[2, "brier"], brier_sd = s[["brier"]],
  log_loss = point[["log_loss"]], log_loss_lo = q[1, "log_loss"], log_loss_hi = q[2, "log_loss"],
  log_loss_sd = s[["log_loss"]],
  ece = point[["ece"]], ece_lo = q[1, "ece"], ece_hi = q[2, "ece"], ece_sd = s[["ece"]])
writeLines(c(paste(names(answers), collapse = ","), paste(fmt(answers), collapse = ",")),
           file.path(out, "answers.csv"))
