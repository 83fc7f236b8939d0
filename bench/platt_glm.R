# Baseline for `plumb fit --map platt`: R reads the score and label columns
# with scan() and fits the same model with glm().
#   Rscript bench/platt_glm.R rows.csv [coefficients.txt]
# plumb's platt map (docs/methods_parametric.md) is p = 1 / (1 + exp(A f + B))
# with f = qlogis(score) (scores clipped into [1e-12, 1 - 1e-12]) fitted by
# maximum likelihood to Platt's targets (N+ + 1)/(N+ + 2) and 1/(N- + 2); on
# such fractional targets glm's binomial likelihood is the quasibinomial
# family. Writes A and B (to standard output, or to the file named second),
# which bench/run.sh compares with plumb's.
args <- commandArgs(trailingOnly = TRUE)
path <- args[1]
header <- strsplit(readLines(path, n = 1), ",", fixed = TRUE)[[1]]
what <- rep(list(NULL), length(header))  # NULL: scan() skips the field
names(what) <- header
what[["score"]] <- 0
what[["label"]] <- 0
rows <- scan(path, what = what, sep = ",", skip = 1, quiet = TRUE)
f <- qlogis(pmin(pmax(rows$score, 1e-12), 1 - 1e-12))
positives <- sum(rows$label)
negatives <- length(rows$label) - positives
target <- ifelse(rows$label == 1, (positives + 1) / (positives + 2), 1 / (negatives + 2))
fit <- glm(target ~ f, family = quasibinomial())
out <- if (length(args) >= 2) args[2] else ""
cat(sprintf("%.17g %.17g\n", -coef(fit)[["f"]], -coef(fit)[["(Intercept)"]]), file = out)
