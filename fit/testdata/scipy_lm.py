"""Run SciPy's MINPACK Levenberg-Marquardt on NIST StRD datasets that are hard
from start 1, to compare with fit.LevenbergMarquardt (see README.md).

Usage, from the repository root:
    /usr/bin/python3 fit/testdata/scipy_lm.py ../shared/reference/nist-strd BoxBOD
"""
import sys
import numpy as np
from scipy.optimize import least_squares

MODELS = {
    "BoxBOD": lambda b, x: b[0] * (1 - np.exp(-b[1] * x)),
    "MGH09": lambda b, x: b[0] * (x**2 + x * b[1]) / (x**2 + x * b[2] + b[3]),
    "MGH10": lambda b, x: b[0] * np.exp(b[1] / (x + b[2])),
}


def parse(path):
    lines = open(path).read().splitlines()
    s1, s2, cert = [], [], []
    for ln in lines[40:]:
        f = ln.split()
        if len(f) == 6 and f[1] == "=":
            s1.append(float(f[2])); s2.append(float(f[3])); cert.append(float(f[4]))
        elif ln.startswith("Residual Sum of Squares:"):
            rss = float(f[-1])
            break
    data = np.array([[float(v) for v in ln.split()] for ln in lines[60:] if ln.strip()])
    return np.array(s1), np.array(s2), np.array(cert), rss, data[:, 0], data[:, 1]


def lre(x, c):
    return 11.0 if x == c else max(0.0, min(11.0, -np.log10(abs(x - c) / abs(c))))


def main():
    folder = sys.argv[1]
    for name in sys.argv[2:]:
        s1, s2, cert, rss, y, x = parse(f"{folder}/{name}.dat")
        model = MODELS[name]
        for label, start in (("start1", s1), ("start2", s2)):
            for xs in ("1.0", "jac"):
                r = least_squares(lambda b: model(b, x) - y, start, method="lm",
                                  x_scale=float(xs) if xs != "jac" else "jac",
                                  ftol=1e-15, xtol=1e-15, gtol=1e-15, max_nfev=5000)
                minb = min(lre(v, c) for v, c in zip(r.x, cert))
                print(f"{name} {label} x_scale={xs}: status={r.status} nfev={r.nfev} "
                      f"x={r.x.tolist()} rss={2 * r.cost:.10e} minLRE_b={minb:.1f} LRE_rss={lre(2 * r.cost, rss):.1f}")


if __name__ == "__main__":
    main()
