# Isotonic and histogram reference cases and answers, for
# tests/reference/test_isotonic_reference.cpp. Usage: Rscript isotonic_cases.R OUT_DIR
#
# For every case NAME it writes:
#   NAME_rows.csv       score, label, weight: the rows plumb fits
#   NAME_pava.csv       score, weight, value: one line per distinct score of
#                       positive total weight, with the weighted isotonic fit
#                       from Iso::pava (ties pooled here first)
#   NAME_isoreg.csv     score, value: stats::isoreg fitted values in sorted
#                       score order (tie-free cases only)
#   NAME_histogram.csv  bin, score_lo, score_hi, weight, value: equal-mass
#                       bins by the rule in include/plumb/maps/histogram_map.hpp,
#                       with per-bin weighted frequencies from tapply
# Numbers are written with 17 significant digits so that both sides read
# exactly the same doubles.
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
suppressPackageStartupMessages({
  library(MASS)
  library(Iso)
})

fmt <- function(x) sprintf("%.17g", x)
write_num <- function(df, name) {
  df <- as.data.frame(lapply(df, fmt))
  write.table(df, file.path(out, name), sep = ",", quote = FALSE, row.names = FALSE)
}

# ---------------------------------------------------------------- cases

# MASS::Pima.te scored by a binomial glm fitted on MASS::Pima.tr: 332 rows,
# every predicted probability distinct (checked below).
pima_fit <- glm(type ~ npreg + glu + bmi + ped + age, family = binomial, data = Pima.tr)
pima <- data.frame(score = unname(predict(pima_fit, newdata = Pima.te, type = "response")),
                   label = as.numeric(Pima.te$type == "Yes"), weight = 1)

# MASS::biopsy without NA rows, glm on V1..V9 fitted on the odd rows and
# scored on the even rows: 341 rows but only about 244 distinct scores,
# because identical cytology records get identical scores.
bx <- na.omit(biopsy)
odd <- seq(1, nrow(bx), by = 2)
bfit <- suppressWarnings(glm(class ~ V1 + V2 + V3 + V4 + V5 + V6 + V7 + V8 + V9,
                             family = binomial, data = bx[odd, ]))
even <- bx[-odd, ]
biopsy_case <- data.frame(score = unname(predict(bfit, newdata = even, type = "response")),
                          label = as.numeric(even$class == "malignant"), weight = 1)

# Seeded simulation, weighted, with many ties and some zero weights: scores
# on a grid of 1/400, labels from a non-linear truth, weights in [0, 4).
set.seed(20261203)
n <- 3000
s <- round(rbeta(n, 2, 2.5) * 400) / 400
truth <- plogis(3 * qlogis(pmin(pmax(s, 0.01), 0.99)) - 0.4)
w <- runif(n, 0, 4)
w[sample.int(n, 200)] <- 0
sim_weighted <- data.frame(score = s, label = as.numeric(runif(n) < truth), weight = w)

# Seeded simulation, unweighted and tie-free (continuous scores): for isoreg.
set.seed(20261204)
n <- 2500
s <- rnorm(n, 0, 1.5)
sim_plain <- data.frame(score = s, label = as.numeric(runif(n) < plogis(0.8 * s + 0.3 * sin(3 * s))),
                        weight = 1)

cases <- list(pima = pima, biopsy = biopsy_case, sim_weighted = sim_weighted, sim_plain = sim_plain)

# ---------------------------------------------------------------- answers

# Weighted isotonic fit per distinct score: pool ties by weight sums and
# weighted means (Barlow et al. 1972: the fit is constant on ties), drop
# scores of zero total weight, then Iso::pava(y, w) in score order.
# Groups are formed by exact double equality (match against the sorted
# distinct scores), not by factor levels, which print only 15 digits.
distinct_groups <- function(d) {
  u <- sort(unique(d$score))
  g <- match(d$score, u)
  list(score = u, group = g,
       w = as.numeric(tapply(d$weight, g, sum)),
       wy = as.numeric(tapply(d$weight * d$label, g, sum)))
}

pava_answer <- function(d) {
  G <- distinct_groups(d)
  keep <- G$w > 0
  value <- Iso::pava(G$wy[keep] / G$w[keep], G$w[keep])
  data.frame(score = G$score[keep], weight = G$w[keep], value = value)
}

# stats::isoreg on tie-free data: yf is in the order of sorted x.
isoreg_answer <- function(d) {
  stopifnot(!anyDuplicated(d$score), all(d$weight == 1))
  fit <- isoreg(d$score, d$label)
  data.frame(score = sort(d$score), value = fit$yf)
}

# Equal-mass bins as the histogram map documents them: distinct scores in
# order; each goes to bin floor(B * (weight before it + half its weight) /
# total), capped at B - 1; empty bin numbers are skipped. Plain double
# arithmetic in a loop, in the same order as the documented rule.
histogram_answer <- function(d, bins) {
  G <- distinct_groups(d)
  keep <- G$w > 0
  score <- G$score[keep]
  gw <- G$w[keep]
  total <- 0
  for (x in gw) total <- total + x
  bin <- integer(length(gw))
  cum <- 0
  for (i in seq_along(gw)) {
    mid <- cum + 0.5 * gw[i]
    cum <- cum + gw[i]
    bin[i] <- min(bins - 1, floor(mid / total * bins))
  }
  row_bin <- bin[match(d$score, score)]
  pos <- !is.na(row_bin)
  num <- tapply(d$weight[pos] * d$label[pos], row_bin[pos], sum)
  den <- tapply(d$weight[pos], row_bin[pos], sum)
  lo <- tapply(d$score[pos], row_bin[pos], min)
  hi <- tapply(d$score[pos], row_bin[pos], max)
  data.frame(bin = as.numeric(names(den)), score_lo = as.numeric(lo), score_hi = as.numeric(hi),
             weight = as.numeric(den), value = as.numeric(num / den))
}

for (name in names(cases)) {
  d <- cases[[name]]
  write_num(d, paste0(name, "_rows.csv"))
  write_num(pava_answer(d), paste0(name, "_pava.csv"))
  tie_free <- !anyDuplicated(d$score) && all(d$weight == 1)
  if (tie_free) write_num(isoreg_answer(d), paste0(name, "_isoreg.csv"))
  write_num(histogram_answer(d, 10), paste0(name, "_histogram.csv"))
  cat(name, ": rows", nrow(d), "distinct scores", length(unique(d$score)), "\n")
}
