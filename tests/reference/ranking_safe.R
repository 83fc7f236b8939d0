# Held-out open data for the ranking-safe maps (centered isotonic): MASS's
# Pima data, scored by a binomial glm fitted on Pima.tr, the same model as
# prior_shift.R. Writes the scores and labels of Pima.tr (where the maps are
# fitted) and of Pima.te (where they are measured), and R's AUC of the raw
# scores on Pima.te: wilcox.test's W / (n1 n0), ties counting one half.
# Usage: Rscript ranking_safe.R OUT_DIR
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
suppressPackageStartupMessages(library(MASS))
fmt <- function(x) sprintf("%.17g", x)

g <- glm(type ~ glu + bmi + ped + age, family = binomial, data = Pima.tr)
p_tr <- unname(predict(g, newdata = Pima.tr, type = "response"))
p_te <- unname(predict(g, newdata = Pima.te, type = "response"))
y_tr <- as.numeric(Pima.tr$type == "Yes")
y_te <- as.numeric(Pima.te$type == "Yes")

w <- suppressWarnings(wilcox.test(p_te[y_te == 1], p_te[y_te == 0], exact = FALSE))$statistic
auc_te <- unname(w) / (sum(y_te == 1) * sum(y_te == 0))

write.csv(data.frame(p = fmt(p_tr), y = y_tr), file.path(out, "fit.csv"), row.names = FALSE, quote = FALSE)
write.csv(data.frame(p = fmt(p_te), y = y_te), file.path(out, "test.csv"), row.names = FALSE, quote = FALSE)
write.csv(data.frame(auc = fmt(auc_te)), file.path(out, "answers.csv"), row.names = FALSE, quote = FALSE)
