# Baseline for `plumb fit --map isotonic` on a slice of rows: R reads the
# score and label columns with scan(), orders the rows by score and runs
# Iso::pava (Turner's weighted pool-adjacent-violators) on the labels.
#   Rscript bench/pava_iso.R slice.csv
# Iso::pava's time grows much faster than linearly in the rows, so
# bench/run.sh gives it 10^5 rows only. Prints the number of distinct
# fitted values.
args <- commandArgs(trailingOnly = TRUE)
path <- args[1]
header <- strsplit(readLines(path, n = 1), ",", fixed = TRUE)[[1]]
what <- rep(list(NULL), length(header))
names(what) <- header
what[["score"]] <- 0
what[["label"]] <- 0
rows <- scan(path, what = what, sep = ",", skip = 1, quiet = TRUE)
o <- order(rows$score)
fitted <- Iso::pava(rows$label[o])
cat(length(unique(fitted)), "\n")
