# Prior-shift reference, written out in R from the papers' formulas on open
# data: MASS::Pima.te scored by a binomial glm fitted on MASS::Pima.tr
# (34% diabetic in Pima.tr). R computes
#   - Bayes' rule on the odds for a new base rate of 0.30 (Saerens, Latinne
#     and Decaestecker 2002; from memory): p' = k p / (k p + 1 - p),
#     k = [0.3/0.7] / [a/(1-a)];
#   - their EM for an unknown new base rate, iterated to 1e-13;
#   - the maximum of the same likelihood by stats::optimize (Brent).
# Usage: Rscript prior_shift.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
suppressPackageStartupMessages(library(MASS))
fmt <- function(x) sprintf("%.17g", x)

g <- glm(type ~ glu + bmi + ped + age, family = binomial, data = Pima.tr)
a <- mean(Pima.tr$type == "Yes")
p <- unname(predict(g, newdata = Pima.te, type = "response"))

k <- (0.30 / 0.70) / (a / (1 - a))
adjusted <- k * p / (k * p + 1 - p)

b <- a
steps <- 0
repeat {
  post <- (b / a) * p / ((b / a) * p + ((1 - b) / (1 - a)) * (1 - p))
  next_b <- mean(post)
  steps <- steps + 1
  done <- abs(next_b - b) <= 1e-13
  b <- next_b
  if (done || steps >= 100000) break
}
loglik <- function(x) sum(log(x * p / a + (1 - x) * (1 - p) / (1 - a)))
optimum <- optimize(loglik, c(0, 1), maximum = TRUE, tol = 1e-12)$maximum

write.table(data.frame(p = fmt(p), adjusted = fmt(adjusted)), file.path(out, "rows.csv"), sep = ",",
            quote = FALSE, row.names = FALSE)
write.table(data.frame(a = fmt(a), k = fmt(k), em = fmt(b), em_steps = steps, optimum = fmt(optimum)),
            file.path(out, "answers.csv"), sep = ",", quote = FALSE, row.names = FALSE)
