"""Independent reference values for Lockstep's monitoring engine, computed with numpy and scipy.

Run once (python3 with numpy >= 2 and scipy >= 1.10):
    python3 tests/reference/make_reference.py
It writes tests/fixtures/reference-pca.json, which tests/unit/monitoring/reference.test.ts compares
with the TypeScript engine to 1e-9 relative. The data sets are drawn here (seeded) and stored in the
JSON, so the TypeScript side scores exactly the same numbers.

Formulas (as cited in src/lib/monitoring): T² limit after Tracy, Young & Mason (1992); Q limit after
Jackson & Mudholkar (1979) and Box (1954); combined index after Yue & Qin (2001); contributions after
Alcala & Qin (2009, 2011). The PCA here is numpy's SVD (LAPACK gesdd), not the engine's routes.
"""
import json
import pathlib

import numpy as np
import scipy
from scipy import stats

OUT = pathlib.Path(__file__).resolve().parents[1] / "fixtures" / "reference-pca.json"


def make_data(rng, n, p, factors, noise):
    W = rng.normal(size=(factors, p)) * rng.uniform(0.5, 2.0, size=(factors, 1))
    offsets = rng.uniform(-5, 50, size=p)
    units = rng.uniform(0.1, 20, size=p)

    def draw(m):
        return offsets + units * (rng.normal(size=(m, factors)) @ W + noise * rng.normal(size=(m, p)))

    return draw(n), draw, units


def reference(name, X, tests, k, scaling, alpha, walpha, qmethod):
    n, p = X.shape
    mean = X.mean(axis=0)
    sd = X.std(axis=0, ddof=1)
    scale = {"autoscale": sd, "pareto": np.sqrt(sd), "none": np.ones(p)}[scaling]
    Z = (X - mean) / scale
    _, s, Vt = np.linalg.svd(Z, full_matrices=False)
    lam_all = s**2 / (n - 1)
    lam = lam_all[lam_all > lam_all[0] * max(n, p) * np.finfo(float).eps * 16]
    P = Vt[:k].T
    tail = lam[k:]
    th1, th2, th3 = (np.sum(tail**i) for i in (1, 2, 3))
    h0 = 1 - 2 * th1 * th3 / (3 * th2**2)

    def t2lim(a):
        return k * (n - 1) * (n + 1) / (n * (n - k)) * stats.f.ppf(1 - a, k, n - k)

    def qlim(a):
        if qmethod == "box":
            return th2 / th1 * stats.chi2.ppf(1 - a, th1**2 / th2)
        # textbook form (valid for h0 > 0, as in every set here; the engine also handles h0 < 0)
        z = stats.norm.ppf(1 - a)
        return th1 * (z * np.sqrt(2 * th2 * h0**2) / th1 + 1 + th2 * h0 * (h0 - 1) / th1**2) ** (1 / h0)

    q_alpha = qlim(alpha)
    t2w = 1 / stats.chi2.ppf(1 - alpha, k)
    qw = 1 / q_alpha
    tr1 = k * t2w + th1 * qw
    tr2 = k * t2w**2 + th2 * qw**2
    g, h = tr2 / tr1, tr1**2 / tr2

    # broken-stick k over the non-zero eigenvalues (Frontier 1976), clamped as in the engine
    r = len(lam)
    b = np.array([np.sum(1 / np.arange(a, r + 1)) / r for a in range(1, r + 1)])
    prop = lam / lam.sum()
    kb = 0
    while kb < r and prop[kb] > b[kb]:
        kb += 1
    kb = min(max(kb, 1), n - 2, r - 1)

    scored = []
    D = P @ np.diag(1 / lam[:k]) @ P.T
    Dh = P @ np.diag(1 / np.sqrt(lam[:k])) @ P.T
    M = np.eye(p) - P @ P.T
    for x in tests:
        z = (x - mean) / scale
        t = P.T @ z
        e = z - P @ t
        t2 = float(np.sum(t**2 / lam[:k]))
        q = float(e @ e)
        scored.append(
            {
                "x": x.tolist(),
                "t2": t2,
                "q": q,
                "phi": q * qw + t2 * t2w,
                "contribQ": (e**2).tolist(),
                "contribT2Complete": ((Dh @ z) ** 2).tolist(),
                "rbcT2": ((D @ z) ** 2 / np.diag(D)).tolist(),
                "rbcQ": ((M @ z) ** 2 / np.diag(M)).tolist(),
            }
        )
    return {
        "name": name,
        "options": {"k": k, "scaling": scaling, "alpha": alpha, "warningAlpha": walpha, "qMethod": qmethod},
        "rows": X.tolist(),
        "mean": mean.tolist(),
        "sd": sd.tolist(),
        "eigenvalues": lam.tolist(),
        "brokenStickK": kb,
        "theta": [th1, th2, th3],
        "limits": {
            "t2": t2lim(alpha),
            "q": q_alpha,
            "t2Warning": t2lim(walpha),
            "qWarning": qlim(walpha),
            "phi": g * stats.chi2.ppf(1 - alpha, h),
            "phiWarning": g * stats.chi2.ppf(1 - walpha, h),
        },
        "phi": {"t2Weight": t2w, "qWeight": qw, "g": g, "h": h},
        # three-moment shifted chi-square (Imhof 1961, section 4), at alpha
        "qThreeMoment": th1 + th3 / th2 * (stats.chi2.ppf(1 - alpha, th2**3 / th3**2) - th2**3 / th3**2),
        "qBox": th2 / th1 * stats.chi2.ppf(1 - alpha, th1**2 / th2),
        "h0": h0,
        "scored": scored,
    }


def main():
    rng = np.random.default_rng(20240611)
    sets = []
    X, draw, units = make_data(rng, 60, 25, 4, 0.3)
    tests = draw(4)
    tests[1, 7] += 4 * units[7] * 0.3 * 3  # one variable pushed off the model plane
    tests[2] = X.mean(axis=0) + 3 * (X[0] - X.mean(axis=0))  # far along the model plane
    sets.append(reference("tall-autoscale-jm", X, tests, 4, "autoscale", 0.01, 0.05, "jackson-mudholkar"))
    X, draw, units = make_data(rng, 20, 50, 3, 0.2)
    tests = draw(3)
    tests[0, 11] += 2 * units[11]
    sets.append(reference("wide-pareto-box", X, tests, 3, "pareto", 0.01, 0.05, "box"))
    X, draw, units = make_data(rng, 40, 120, 5, 0.5)
    sets.append(reference("wide-autoscale-jm", X, draw(3), 5, "autoscale", 0.05, 0.1, "jackson-mudholkar"))

    quantiles = {
        "f": [[a, d1, d2, stats.f.ppf(1 - a, d1, d2)] for a, d1, d2 in
              [(0.05, 1, 1), (0.05, 5, 10), (0.05, 10, 10), (0.05, 3, 20), (0.01, 5, 10), (0.01, 2, 10), (0.01, 11, 489)]],
        "chi2": [[a, k, stats.chi2.ppf(1 - a, k)] for a, k in
                 [(0.05, 1), (0.01, 1), (0.05, 10), (0.01, 10), (0.05, 30), (0.01, 7.3), (0.05, 2.5)]],
        "normal": [[a, stats.norm.ppf(1 - a)] for a in [0.1, 0.05, 0.025, 0.01, 0.005, 0.001]],
    }
    OUT.write_text(
        json.dumps(
            {
                "generator": "tests/reference/make_reference.py",
                "numpy": np.__version__,
                "scipy": scipy.__version__,
                "sets": sets,
                "quantiles": quantiles,
            },
            indent=1,
        )
    )
    print(f"wrote {OUT} (numpy {np.__version__}, scipy {scipy.__version__})")


if __name__ == "__main__":
    main()
