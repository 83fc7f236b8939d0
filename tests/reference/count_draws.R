# The laws that plumb's count samplers (include/plumb/count_draws.hpp) must
# draw from, by R's stats::dpois / ppois and dbinom / pbinom, for cases on
# both sides of the samplers' switch-over points (inversion up to 64 rows;
# beyond, Poisson by PTRS and binomial by BTRS when n p >= 10 on the rarer
# outcome). For each case, the probability of every count k within 8
# standard deviations of the mean, the first class holding the whole lower
# tail (ppois / pbinom at k) and the last the whole upper tail, so a case's
# probabilities sum to 1. Also the chi-square critical values qchisq(0.999,
# df) for the goodness-of-fit tests (significance level 0.001).
# Usage: Rscript count_draws.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
fmt <- function(x) sprintf("%.17g", x)

# kind 0: Poisson(n); kind 1: Binomial(n, p).
cases <- data.frame(
  kind = c(0, 0, 0, 0, 0, 0, 0, 0, 0,
           1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1),
  n = c(1, 2, 10, 64, 65, 100, 1000, 1e5, 1e7,
        1, 20, 64, 64, 65, 65, 65, 199, 200, 1000, 1e4, 1e5, 1e6, 1e7),
  p = c(NA, NA, NA, NA, NA, NA, NA, NA, NA,
        0.3, 0.3, 0.5, 0.9, 0.1, 0.5, 0.85, 0.05, 0.05, 0.5, 0.9999, 0.001, 0.3, 0.7))

rows <- list()
for (i in seq_len(nrow(cases))) {
  n <- cases$n[i]
  p <- cases$p[i]
  # Counts within 8 standard deviations of the mean (and 10 more), cut to
  # the support; the tails beyond hold less than 10^-15 of the mass.
  mu <- if (cases$kind[i] == 0) n else n * p
  sd <- if (cases$kind[i] == 0) sqrt(n) else sqrt(n * p * (1 - p))
  lo <- max(0, floor(mu - 8 * sd - 10))
  hi <- ceiling(mu + 8 * sd + 10)
  if (cases$kind[i] == 1) hi <- min(n, hi)
  if (cases$kind[i] == 0) {
    k <- lo:hi
    prob <- dpois(k, n)
    prob[1] <- ppois(lo, n)
    prob[length(k)] <- ppois(hi - 1, n, lower.tail = FALSE)
  } else {
    k <- lo:hi
    prob <- dbinom(k, n, p)
    if (length(k) > 1) {
      prob[1] <- pbinom(lo, n, p)
      prob[length(k)] <- pbinom(hi - 1, n, p, lower.tail = FALSE)
    }
  }
  rows[[i]] <- data.frame(case = i - 1, k = k, prob = fmt(prob))
}
write.csv(data.frame(kind = cases$kind, n = fmt(cases$n), p = ifelse(is.na(cases$p), "NA", fmt(cases$p))),
          file.path(out, "cases.csv"), row.names = FALSE, quote = FALSE)
write.csv(do.call(rbind, rows), file.path(out, "laws.csv"), row.names = FALSE, quote = FALSE)
write.csv(data.frame(df = 1:500, q = fmt(qchisq(0.999, 1:500))), file.path(out, "critical.csv"),
          row.names = FALSE, quote = FALSE)
