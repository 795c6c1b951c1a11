#!/usr/bin/env python3
"""A Huber M-estimator fitted by IRLS, as an outside estimator for rhomark.

It speaks rhomark's line protocol (see package external): it reads one JSON
request per line on standard input (the design "x", responses "y", names
"names") and writes one JSON reply per line on standard output, until its
input ends. Only numpy is used.

The algorithm is the one of rhomark's own IRLS fit with a Huber psi and the
MAD scale, so that both give the same estimates:

  start from least squares; then at each iterate
    r = y - X beta,  sigma = median|r_i| / Phi^-1(3/4)   (the normalised MAD),
    stop when the relative change of the last step,
        ||delta|| / ||beta||, is at most tol (or after max-iter steps);
    weights w_i = min(1, k / |r_i / sigma|),
    delta = (X' W X)^-1 X' W r,  beta = beta + delta.

Usage, as a scenario's command:
    [python3, fit_huber.py, --k, "1.345", --tol, "1e-10", --max-iter, "100"]
"""

import argparse
import json
import sys

import numpy as np

# Phi^-1(3/4), the median of |Z| for a standard normal Z (common practice).
MAD_CONSISTENCY = 0.67448975019608174320


def fit(x, y, k, tol, max_iter):
    """Return (beta, sigma, iterations, converged, status)."""
    beta = np.linalg.lstsq(x, y, rcond=None)[0]
    tiny = np.finfo(float).tiny
    change = np.inf
    iterations = 0
    while True:
        r = y - x @ beta
        sigma = np.median(np.abs(r)) / MAD_CONSISTENCY
        if sigma == 0:
            return beta, sigma, iterations, False, "zero-scale"
        if not np.isfinite(sigma):
            return beta, sigma, iterations, False, "non-finite"
        if change <= tol:
            return beta, sigma, iterations, True, "converged-change"
        if iterations >= max_iter:
            return beta, sigma, iterations, False, "iteration-limit"
        u = np.abs(r) / sigma
        w = np.where(u > k, k / np.maximum(u, tiny), 1.0)
        xw = x * w[:, None]
        delta = np.linalg.solve(xw.T @ x, xw.T @ r)
        beta = beta + delta
        iterations += 1
        change = np.linalg.norm(delta) / max(np.linalg.norm(beta), tiny)


def reply(line, args):
    """Return the reply line to one request line."""
    try:
        req = json.loads(line)
        x = np.asarray(req["x"], dtype=float)
        y = np.asarray(req["y"], dtype=float)
        if x.ndim != 2 or x.shape[0] != y.shape[0]:
            raise ValueError("x must be %d rows of numbers" % y.shape[0])
        beta, sigma, iterations, converged, status = fit(
            x, y, args.k, args.tol, args.max_iter)
    except (ValueError, KeyError, TypeError, np.linalg.LinAlgError) as err:
        return json.dumps({"error": "%s: %s" % (type(err).__name__, err)})
    # json writes floats with repr, which reads back to the same double.
    return json.dumps({
        "coefficients": [float(b) for b in beta],
        "scale": float(sigma),
        "iterations": iterations,
        "converged": converged,
        "status": status,
    })


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--k", type=float, default=1.345,
                        help="Huber tuning constant (default 1.345)")
    parser.add_argument("--tol", type=float, default=1e-10,
                        help="relative coefficient change that stops the fit")
    parser.add_argument("--max-iter", type=int, default=100,
                        help="iteration cap (default 100)")
    args = parser.parse_args()
    for line in sys.stdin:
        if line.strip():
            sys.stdout.write(reply(line, args) + "\n")
            sys.stdout.flush()


if __name__ == "__main__":
    main()
