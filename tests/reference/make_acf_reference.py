"""Independent reference values for the sample autocorrelation function, computed with numpy.

Run once (python3 with numpy >= 1.20):
    python3 tests/reference/make_acf_reference.py
It writes tests/reference/reference-acf.json (beside this script), which tests/unit/monitoring/autocorrelation.test.ts
compares with the TypeScript engine to 1e-12. The series are drawn here (seeded) and stored in the
JSON, so the TypeScript side reads exactly the same numbers.

Estimator (Box, Jenkins & Reinsel 2008, ch. 2): r_k = sum_t (x_t - xbar)(x_{t+k} - xbar) / sum_t (x_t - xbar)^2,
computed here with numpy's full cross-correlation (np.correlate), not with the engine's loops.
Bartlett's (1946) large-lag standard error: se(r_k) = sqrt((1 + 2 sum_{j<k} r_j^2) / n).
"""
import json
import pathlib

import numpy as np

OUT = pathlib.Path(__file__).resolve().parent / "reference-acf.json"


def acf(x, nlags):
    d = np.asarray(x, dtype=float) - np.mean(x)
    full = np.correlate(d, d, mode="full")[len(d) - 1 :]
    return (full[1 : nlags + 1] / full[0]).tolist()


def bartlett(r, n):
    r = np.asarray(r)
    cum = np.concatenate([[0.0], np.cumsum(r[:-1] ** 2)])
    return np.sqrt((1 + 2 * cum) / n).tolist()


def ar1(rng, n, phi, burn=200):
    e = rng.normal(size=n + burn)
    x = np.empty(n + burn)
    x[0] = e[0] / np.sqrt(1 - phi**2)
    for t in range(1, n + burn):
        x[t] = phi * x[t - 1] + e[t]
    return (x[burn:] * 0.1 + 1.0).tolist()  # a ratio-like level: mean 1, innovations sd 0.1


def main():
    rng = np.random.default_rng(20240611)
    cases = []
    for name, series in [
        ("white noise, n = 60", (1.0 + 0.2 * rng.normal(size=60)).tolist()),
        ("AR(1) phi = 0.6, n = 200", ar1(rng, 200, 0.6)),
        ("AR(1) phi = -0.4, n = 80", ar1(rng, 80, -0.4)),
    ]:
        r = acf(series, 25)
        cases.append({"name": name, "series": series, "acf": r, "bartlettSe": bartlett(r, len(series))})
    OUT.write_text(json.dumps({"source": "numpy " + np.__version__ + ", tests/reference/make_acf_reference.py", "cases": cases}, indent=1) + "\n")
    print("wrote", OUT)


if __name__ == "__main__":
    main()
