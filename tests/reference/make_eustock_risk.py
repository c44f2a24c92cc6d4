#!/usr/bin/python3
"""Portfolio risk figures of eustock_risk_r.csv recomputed with numpy, from R's model.

Run from this folder after make_eustock_risk.R:  /usr/bin/python3 make_eustock_risk.py
Reads eustock_returns.csv and eustock_risk_r.csv, writes eustock_risk_numpy.csv.

An independent second computation of the same quadratic forms: numpy's own standard
deviations (ddof=0, our engine's convention) put factanal's standardized loadings and
uniquenesses on the covariance scale; Sigma = L L' + diag(psi) is formed densely and every
figure is taken from w' Sigma w and Sigma w. The script stops unless every figure agrees
with R's to 1e-12 relative (to the largest figure of its kind, for values near zero).
"""
import datetime
import sys

import numpy as np

RETURNS = "eustock_returns.csv"
R_FILE = "eustock_risk_r.csv"
OUT = "eustock_risk_numpy.csv"
TOLERANCE = 1e-12


def data_lines(path):
    with open(path, encoding="utf-8") as f:
        return [line.rstrip("\n") for line in f if not line.startswith("#")]


def main():
    lines = data_lines(RETURNS)
    names = lines[0].split(",")[1:]
    r = np.array([[float(v) for v in line.split(",")[1:]] for line in lines[1:]])
    assert r.shape == (1859, 4), r.shape

    ref = {}
    order = []
    for line in data_lines(R_FILE)[1:]:
        block, portfolio, item, quantity, value = line.split(",")
        key = (block, portfolio, item, quantity)
        ref[key] = float(value)
        order.append(key)

    sd = r.std(axis=0, ddof=0)
    lam = np.array([ref[("model", "-", a, "loading_standardized")] for a in names])
    u = np.array([ref[("model", "-", a, "uniqueness")] for a in names])
    L = (lam * sd).reshape(-1, 1)
    psi = u * sd**2
    sigma_matrix = L @ L.T + np.diag(psi)

    ours = {}
    for i, a in enumerate(names):
        ours[("model", "-", a, "uniqueness")] = u[i]
        ours[("model", "-", a, "loading_standardized")] = lam[i]
        ours[("model", "-", a, "sd_n")] = sd[i]
        ours[("model", "-", a, "loading")] = L[i, 0]
        ours[("model", "-", a, "specific_variance")] = psi[i]
    for p in ("equal", "long_short"):
        w = np.array([ref[("weights", p, a, "weight")] for a in names])
        total = w @ sigma_matrix @ w
        systematic = w @ (L @ L.T) @ w
        specific = w @ np.diag(psi) @ w
        sigma = np.sqrt(total)
        x = (L.T @ w)[0]
        sw = sigma_matrix @ w
        common = (L @ L.T) @ w
        for i, a in enumerate(names):
            ours[("weights", p, a, "weight")] = w[i]
        ours[("portfolio", p, "-", "systematic_variance")] = systematic
        ours[("portfolio", p, "-", "specific_variance")] = specific
        ours[("portfolio", p, "-", "total_variance")] = total
        ours[("portfolio", p, "-", "volatility")] = sigma
        ours[("portfolio", p, "-", "systematic_share")] = systematic / total
        ours[("portfolio", p, "-", "specific_volatility_contribution")] = specific / sigma
        ours[("factor", p, "f1", "exposure")] = x
        ours[("factor", p, "f1", "variance")] = x * x
        ours[("factor", p, "f1", "volatility")] = x * x / sigma
        ours[("factor", p, "f1", "share")] = x * x / total
        for i, a in enumerate(names):
            ours[("asset", p, a, "systematic_variance")] = w[i] * common[i]
            ours[("asset", p, a, "specific_variance")] = w[i] ** 2 * psi[i]
            ours[("asset", p, a, "variance")] = w[i] * sw[i]
            ours[("asset", p, a, "marginal")] = sw[i] / sigma
            ours[("asset", p, a, "volatility")] = w[i] * sw[i] / sigma
            ours[("asset", p, a, "share")] = w[i] * sw[i] / total

    # Relative to the largest magnitude of the same quantity in the same block (a long-short
    # asset's contribution can be near zero while its siblings are not).
    scale = {}
    for key, value in ref.items():
        group = (key[0], key[3])
        scale[group] = max(scale.get(group, 0.0), abs(value))
    rows, worst = [], 0.0
    for key in order:
        if key[0] == "fit":
            continue
        mine, theirs = ours[key], ref[key]
        diff = abs(mine - theirs) / scale[(key[0], key[3])]
        worst = max(worst, diff)
        rows.append(list(key) + [repr(float(mine)), repr(theirs), "%.3g" % diff])
    if worst > TOLERANCE:
        sys.exit("numpy and R disagree: largest relative difference %.3g" % worst)

    with open(OUT, "w", encoding="utf-8") as f:
        for line in [
            "The figures of eustock_risk_r.csv recomputed with numpy from R's factanal loadings and uniquenesses:",
            "sd = r.std(axis=0, ddof=0); L = loading_standardized * sd; psi = uniqueness * sd**2;",
            "Sigma = L @ L.T + np.diag(psi) formed densely; figures from w @ Sigma @ w and Sigma @ w.",
            "relative_difference is |numpy - R| over the largest |R| of the same block and quantity;",
            "the script stops above %g. Largest measured: %.3g." % (TOLERANCE, worst),
            "tool: Python %s (Debian python3, /usr/bin/python3), numpy %s"
            % (sys.version.split()[0], np.__version__),
            "generated: %s by tests/reference/make_eustock_risk.py" % datetime.date.today().isoformat(),
        ]:
            f.write("# " + line + "\n")
        f.write("block,portfolio,item,quantity,value,r_value,relative_difference\n")
        for row in rows:
            f.write(",".join(row) + "\n")
    print("largest relative difference numpy vs R: %.3g" % worst)


if __name__ == "__main__":
    main()
