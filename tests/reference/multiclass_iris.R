# Multi-class references on datasets::iris (R base) with scores from a
# deliberately mis-scaled model: a multinomial fit (nnet::multinom, decay
# 0.5) on the sepal measurements, its log-probabilities then multiplied by
# 2.5 and shifted per class (over-confident and biased), renormalised.
# Writes:
#   iris_rows.csv       p1, p2, p3 (the scores), label (class index 0..2)
#   temperature.csv     T and log loss: stats::optimize of the mean log loss over T
#   vector.csv          q1..q3 per row and the log loss: nnet::nnet, softmax, no
#                       hidden layer, only the diagonal and biases free (mask)
#   matrix.csv          q1..q3 per row and the log loss: nnet::multinom on l1..l3
#   dirichlet.csv       W (w11..w33), b1..b3 and the penalised objective at l2 = 0.01:
#                       stats::optim BFGS with the analytic gradient
# The features l are log(max(p, 1e-15)) less the log of the row's sum, as
# plumb defines them (docs/methods.md, "Multi-class maps").
# Usage: Rscript multiclass_iris.R OUT_DIR
suppressMessages(library(nnet))
args <- commandArgs(trailingOnly = TRUE)
out <- args[1]
wr <- function(d, name) write.csv(format(d, digits = 17), file.path(out, name), row.names = FALSE, quote = FALSE)

base <- multinom(Species ~ Sepal.Length + Sepal.Width, data = iris, trace = FALSE, decay = 0.5)
p0 <- predict(base, iris, type = "probs")
eta <- 2.5 * log(p0) + matrix(c(0.4, -0.3, 0), nrow(p0), 3, byrow = TRUE)
p <- exp(eta) / rowSums(exp(eta))
y <- as.integer(iris$Species)  # 1..3
n <- nrow(p); K <- 3
wr(data.frame(p1 = p[, 1], p2 = p[, 2], p3 = p[, 3], label = y - 1), "iris_rows.csv")

pf <- pmax(p, 1e-15)
l <- log(pf) - log(rowSums(pf))
Y <- diag(K)[y, ]
lse <- function(e) { m <- apply(e, 1, max); m + log(rowSums(exp(e - m))) }
mean_loss <- function(e) mean(lse(e) - e[cbind(1:n, y)])

# Temperature: R base optimize.
o <- optimize(function(T) mean_loss(l / T), interval = c(0.05, 20), tol = 1e-12)
wr(data.frame(temperature = o$minimum, loss = o$objective), "temperature.csv")

# Vector scaling: nnet with inputs l, no hidden units, skip-layer softmax
# outputs; the weights of output k are (bias, l1, l2, l3), only bias and l_k free.
mask <- rep(FALSE, K * (K + 1)); wts <- rep(0, K * (K + 1))
for (k in 1:K) {
  mask[(k - 1) * (K + 1) + 1] <- TRUE
  mask[(k - 1) * (K + 1) + 1 + k] <- TRUE
  wts[(k - 1) * (K + 1) + 1 + k] <- 1
}
v <- nnet(l, Y, size = 0, skip = TRUE, softmax = TRUE, Wts = wts, mask = mask, maxit = 10000,
          abstol = 1e-14, reltol = 1e-15, trace = FALSE)
W <- matrix(v$wts, nrow = K, byrow = TRUE)  # row k: bias, l1..l3
stopifnot(all(abs(W[, -1][row(W[, -1]) != col(W[, -1])]) == 0))
qv <- v$fitted.values
stopifnot(max(abs(qv - exp(cbind(1, l) %*% t(W) - lse(cbind(1, l) %*% t(W))))) < 1e-12)
wr(data.frame(q1 = qv[, 1], q2 = qv[, 2], q3 = qv[, 3], loss = mean(-log(qv[cbind(1:n, y)]))), "vector.csv")

# Matrix scaling without regularisation: multinom on l1..l3.
d <- data.frame(l1 = l[, 1], l2 = l[, 2], l3 = l[, 3], y = iris$Species)
m <- multinom(y ~ l1 + l2 + l3, data = d, trace = FALSE, maxit = 10000, abstol = 1e-14, reltol = 1e-15)
qm <- predict(m, d, type = "probs")
wr(data.frame(q1 = qm[, 1], q2 = qm[, 2], q3 = qm[, 3], loss = mean(-log(qm[cbind(1:n, y)])),
              converged = as.integer(m$convergence == 0)), "matrix.csv")

# Dirichlet calibration with L2 = 0.01 on the off-diagonal of W and on b:
# optim BFGS on mean log loss + l2 * penalty, from W = I, b = 0.
lambda <- 0.01
offd <- matrix(TRUE, K, K); diag(offd) <- FALSE
unpack <- function(th) list(W = matrix(th[1:(K * K)], K, K, byrow = TRUE), b = th[K * K + 1:K])
objective <- function(th) {
  u <- unpack(th); e <- l %*% t(u$W) + matrix(u$b, n, K, byrow = TRUE)
  mean_loss(e) + lambda * (sum(u$W[offd]^2) + sum(u$b^2))
}
gradient <- function(th) {
  u <- unpack(th); e <- l %*% t(u$W) + matrix(u$b, n, K, byrow = TRUE)
  q <- exp(e - lse(e)); r <- (q - Y) / n
  gW <- t(r) %*% l + 2 * lambda * u$W * offd
  gb <- colSums(r) + 2 * lambda * u$b
  c(as.vector(t(gW)), gb)
}
f <- optim(c(as.vector(t(diag(K))), rep(0, K)), objective, gradient, method = "BFGS",
           control = list(maxit = 10000, reltol = 1e-16))
u <- unpack(f$par)
wr(data.frame(w11 = u$W[1, 1], w12 = u$W[1, 2], w13 = u$W[1, 3], w21 = u$W[2, 1], w22 = u$W[2, 2],
              w23 = u$W[2, 3], w31 = u$W[3, 1], w32 = u$W[3, 2], w33 = u$W[3, 3],
              b1 = u$b[1], b2 = u$b[2], b3 = u$b[3], objective = f$value, converged = as.integer(f$convergence == 0)),
   "dirichlet.csv")
