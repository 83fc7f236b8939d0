# Reference values for the multi-class report (tests/reference/test_class_report_reference.cpp),
# computed directly in R base on the same rows.
# Usage: Rscript class_report_reference.R OUT_DIR
# Writes OUT_DIR/class_rows.csv (p1..p4, label as 0-based class index,
# weight) and OUT_DIR/class_answers.csv (one row of named values), with 17
# significant digits so that the comparison is not limited by the file.
out <- commandArgs(trailingOnly = TRUE)[1]
fmt <- function(df) {
  for (j in seq_along(df)) df[[j]] <- sprintf("%.17g", as.numeric(df[[j]]))
  df
}
write_full <- function(df, name) write.csv(fmt(df), file.path(out, name), row.names = FALSE, quote = FALSE)

# Invented rows: 4 classes, labels drawn from softmax(z), scores an
# over-confident softmax(1.6 z + shift); the last rows tie for the top label.
set.seed(20261203)
n <- 3000; K <- 4
softmax <- function(z) { e <- exp(z - apply(z, 1, max)); e / rowSums(e) }
z <- matrix(rnorm(n * K, sd = 1.2), n, K)
truth <- softmax(z)
y <- apply(truth, 1, function(p) sample.int(K, 1, prob = p))  # 1-based
P <- softmax(1.6 * z + matrix(c(0.3, 0, -0.2, 0.1), n, K, byrow = TRUE))
ties <- (n - 9):n
P[ties, ] <- matrix(c(0.4, 0.4, 0.1, 0.1), length(ties), K, byrow = TRUE)
w <- round(runif(n, 0.2, 3), 2)
write_full(data.frame(p1 = P[, 1], p2 = P[, 2], p3 = P[, 3], p4 = P[, 4], label = y - 1, weight = w),
           "class_rows.csv")

clip <- 1e-12
Y <- outer(y, 1:K, "==") * 1
# Equal-width bins as the binary reference: min(k - 1, floor(k p)).
width_bin <- function(p, k) pmin(k - 1, floor(k * p))
# Equal-mass bins with weights: tie groups stay whole; a group goes to bin
# floor(k (W_before + W_group / 2) / W_total).
mass_bin <- function(p, w, k) {
  v <- sort(unique(p))
  g <- tapply(w, factor(p, levels = v), sum)
  before <- cumsum(g) - g
  b <- pmin(k - 1, floor(k * (before + g / 2) / sum(w)))
  as.vector(b)[match(p, v)]
}
# Naeini, Cooper and Hauskrecht (2015) ECE over the given bins, weighted.
ece <- function(p, o, w, b) {
  W <- tapply(w, b, sum)
  f <- tapply(w * p, b, sum) / W
  obs <- tapply(w * o, b, sum) / W
  sum(W * abs(f - obs)) / sum(w)
}

describe <- function(w, suffix) {
  ans <- list()
  # Multi-class Brier (Brier 1950): per row the sum over classes of (p_k - y_k)^2.
  ans$brier <- weighted.mean(rowSums((P - Y)^2), w)
  ans$log_loss <- weighted.mean(-log(pmax(P[cbind(1:n, y)], clip)), w)
  top <- max.col(P, ties.method = "first")
  conf <- P[cbind(1:n, top)]
  right <- (top == y) * 1
  ans$accuracy <- weighted.mean(right, w)
  ans$mean_confidence <- weighted.mean(conf, w)
  ans$confidence_gap <- ans$mean_confidence - ans$accuracy
  ans$top_ece_width <- ece(conf, right, w, width_bin(conf, 10))
  ans$top_ece_mass <- ece(conf, right, w, mass_bin(conf, w, 10))
  cw <- sapply(1:K, function(k) ece(P[, k], Y[, k], w, width_bin(P[, k], 10)))
  cm <- sapply(1:K, function(k) ece(P[, k], Y[, k], w, mass_bin(P[, k], w, 10)))
  ans$classwise_ece_width <- mean(cw)
  ans$classwise_ece_mass <- mean(cm)
  for (k in 1:K) {
    ans[[paste0("class", k, "_ece_width")]] <- cw[k]
    ans[[paste0("class", k, "_share")]] <- sum(w * Y[, k]) / sum(w)
    ans[[paste0("class", k, "_mean_forecast")]] <- weighted.mean(P[, k], w)
  }
  names(ans) <- paste0(names(ans), suffix)
  ans
}
ans <- c(describe(rep(1, n), ""), describe(w, "_w"))
write_full(as.data.frame(ans), "class_answers.csv")
