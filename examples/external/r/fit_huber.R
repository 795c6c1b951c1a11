#!/usr/bin/env Rscript
# A Huber M-estimator fitted by IRLS, as an outside estimator for rhomark.
#
# It speaks rhomark's line protocol (see package external): it reads one
# JSON request per line on standard input (the design "x", responses "y",
# names "names") and writes one JSON reply per line on standard output,
# until its input ends. Only base R and jsonlite are used.
#
# The algorithm is the one of rhomark's own IRLS fit with a Huber psi and
# the MAD scale, so that both give the same estimates:
#
#   start from least squares; then at each iterate
#     r = y - X beta,  sigma = median|r_i| / qnorm(3/4)   (the normalised MAD),
#     stop when the relative change of the last step,
#         ||delta|| / ||beta||, is at most tol (or after max-iter steps);
#     weights w_i = min(1, k / |r_i / sigma|),
#     delta = (X' W X)^-1 X' W r,  beta = beta + delta.
#
# Usage, as a scenario's command:
#   [Rscript, fit_huber.R, --k, "1.345", --tol, "1e-10", --max-iter, "100"]

suppressPackageStartupMessages(library(jsonlite))

args <- commandArgs(trailingOnly = TRUE)
option <- function(name, default) {
  i <- match(name, args)
  if (is.na(i)) return(default)
  value <- suppressWarnings(as.numeric(args[i + 1]))
  if (is.na(value)) stop(sprintf("%s needs a number", name))
  value
}
k <- option("--k", 1.345)
tol <- option("--tol", 1e-10)
max_iter <- option("--max-iter", 100)

# Phi^-1(3/4), the median of |Z| for a standard normal Z (common practice).
mad_consistency <- qnorm(0.75)

fit <- function(x, y) {
  beta <- qr.coef(qr(x), y)
  if (anyNA(beta)) stop("the design is singular")
  change <- Inf
  iterations <- 0
  repeat {
    r <- as.vector(y - x %*% beta)
    sigma <- median(abs(r)) / mad_consistency
    done <- function(converged, status) {
      list(beta = beta, sigma = sigma, iterations = iterations,
           converged = converged, status = status)
    }
    if (sigma == 0) return(done(FALSE, "zero-scale"))
    if (!is.finite(sigma)) return(done(FALSE, "non-finite"))
    if (change <= tol) return(done(TRUE, "converged-change"))
    if (iterations >= max_iter) return(done(FALSE, "iteration-limit"))
    u <- abs(r) / sigma
    w <- ifelse(u > k, k / pmax(u, .Machine$double.xmin), 1)
    delta <- as.vector(solve(crossprod(x, w * x), crossprod(x, w * r)))
    beta <- beta + delta
    iterations <- iterations + 1
    change <- sqrt(sum(delta^2)) / max(sqrt(sum(beta^2)), .Machine$double.xmin)
  }
}

# Numbers with 17 significant digits read back to the same double.
numbers <- function(v) paste(sprintf("%.17g", v), collapse = ",")

reply <- function(line) {
  tryCatch({
    req <- fromJSON(line, simplifyVector = TRUE)
    y <- as.numeric(req$y)
    x <- req$x
    if (!is.matrix(x)) x <- matrix(x, nrow = length(y), byrow = TRUE)
    storage.mode(x) <- "double"
    if (nrow(x) != length(y)) stop(sprintf("x must be %d rows of numbers", length(y)))
    f <- fit(x, y)
    sprintf('{"coefficients":[%s],"scale":%s,"iterations":%d,"converged":%s,"status":%s}',
            numbers(f$beta), numbers(f$sigma), as.integer(f$iterations),
            if (f$converged) "true" else "false", toJSON(f$status, auto_unbox = TRUE))
  }, error = function(e) {
    sprintf('{"error":%s}', toJSON(conditionMessage(e), auto_unbox = TRUE))
  })
}

input <- file("stdin", open = "r")
while (length(line <- readLines(input, n = 1, warn = FALSE)) > 0) {
  if (nzchar(trimws(line))) {
    cat(reply(line), "\n", sep = "")
    flush(stdout())
  }
}
