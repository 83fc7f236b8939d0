# Venn-Abers by brute force with Iso::pava (Turner, Debian r-cran-iso), for
# the precomputed knots of plumb's venn_abers map: MASS's Pima data scored by
# a binomial glm fitted on Pima.tr (the model of ranking_safe.R); Pima.tr's
# scores and labels are the calibration set, and each test score (Pima.te's
# scores, every calibration score itself, and the ends 0 and 1) gets its own
# refit: the calibration rows pooled by distinct score, the test row (weight
# 1) added at its score with label 0, then with label 1, and pava's value at
# the test row is p0, then p1 (Vovk and Petej 2014).
# Usage: Rscript venn_abers.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
suppressPackageStartupMessages({
  library(MASS)
  library(Iso)
})
fmt <- function(x) sprintf("%.17g", x)

g <- glm(type ~ glu + bmi + ped + age, family = binomial, data = Pima.tr)
p_tr <- unname(predict(g, newdata = Pima.tr, type = "response"))
p_te <- unname(predict(g, newdata = Pima.te, type = "response"))
y_tr <- as.numeric(Pima.tr$type == "Yes")
y_te <- as.numeric(Pima.te$type == "Yes")

xs <- sort(unique(p_tr))
w_cal <- as.numeric(table(factor(p_tr, levels = xs)))
ysum_cal <- as.numeric(tapply(y_tr, factor(p_tr, levels = xs), sum))

refit <- function(s, label) {
  at <- match(s, xs)
  if (!is.na(at)) {
    w <- w_cal
    ys <- ysum_cal
    w[at] <- w[at] + 1
    ys[at] <- ys[at] + label
    i <- at
    x <- xs
  } else {
    i <- sum(xs < s) + 1
    x <- append(xs, s, after = i - 1)
    w <- append(w_cal, 1, after = i - 1)
    ys <- append(ysum_cal, label, after = i - 1)
  }
  pava(ys / w, w)[i]
}

tests <- c(p_te, p_tr, 0, 1)
p0 <- sapply(tests, refit, label = 0)
p1 <- sapply(tests, refit, label = 1)

write.csv(data.frame(p = fmt(p_tr), y = y_tr), file.path(out, "fit.csv"), row.names = FALSE, quote = FALSE)
write.csv(data.frame(s = fmt(tests), p0 = fmt(p0), p1 = fmt(p1)), file.path(out, "answers.csv"),
          row.names = FALSE, quote = FALSE)
write.csv(data.frame(p = fmt(p_te), y = y_te), file.path(out, "test.csv"), row.names = FALSE, quote = FALSE)
