"""numpy counterpart of bench/engine.ts: the same fit and scoring on the same data.

Called by bench/engine.ts as:  python3 bench/engine_numpy.py FIT.f64 N P SCORE.f64 M P2 K
(raw little-endian float64 files written by the TypeScript side). Prints one JSON line with the
timings. BLAS threads are limited to one by the caller (OMP/OPENBLAS/MKL_NUM_THREADS=1) so that the
comparison is one core against one core.
"""
import json
import sys
import time

import numpy as np


def best_of(fn, repeat):
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def main():
    fit_path, n, p, score_path, m, p2, k = sys.argv[1:8]
    n, p, m, p2, k = int(n), int(p), int(m), int(p2), int(k)
    X = np.fromfile(fit_path, dtype="<f8").reshape(n, p)

    def fit_svd():
        Z = (X - X.mean(0)) / X.std(0, ddof=1)
        _, s, vt = np.linalg.svd(Z, full_matrices=False)
        return s, vt[:k]

    def fit_gram():
        Z = (X - X.mean(0)) / X.std(0, ddof=1)
        w, u = np.linalg.eigh(Z @ Z.T)
        w, u = w[::-1], u[:, ::-1]
        return w, (Z.T @ u[:, :k]) / np.sqrt(w[:k])

    fit_svd_s = best_of(fit_svd, 3)
    fit_gram_s = best_of(fit_gram, 3)

    Y = np.fromfile(score_path, dtype="<f8").reshape(m, p2)
    rng = np.random.default_rng(1)
    G = rng.normal(size=(200, p2))
    mean, sd = G.mean(0), G.std(0, ddof=1)
    _, s, vt = np.linalg.svd((G - mean) / sd, full_matrices=False)
    P = vt[:k].T
    lam = s[:k] ** 2 / 199

    def score():
        Z = (Y - mean) / sd
        T = Z @ P
        E = Z - T @ P.T
        return (T**2 / lam).sum(1), (E**2).sum(1)

    score_s = best_of(score, 5)
    print(json.dumps({
        "numpy": np.__version__,
        "fitSvdMs": fit_svd_s * 1e3,
        "fitGramMs": fit_gram_s * 1e3,
        "scoreWafersPerSecond": m / score_s,
    }))


if __name__ == "__main__":
    main()
