#!/usr/bin/python3
"""Eigenpairs of the EuStockMarkets return covariance by numpy, cross-checked with R.

Run from this folder after make_eustock.R:  /usr/bin/python3 make_eustock_pca.py
Reads eustock_returns.csv and eustock_pca_r.csv, writes eustock_pca_reference.csv.

Why ddof=0: our engine estimates the covariance by maximum likelihood, dividing by the
number of observations n (the sum of the weights), not n - 1. R's cov() divides by n - 1,
so its eigenvalues are (n / (n - 1)) times ours; the eigenvectors are the same.
"""
import datetime
import sys

import numpy as np
import scipy

RETURNS = "eustock_returns.csv"
R_FILE = "eustock_pca_r.csv"
OUT = "eustock_pca_reference.csv"


def data_lines(path):
    with open(path, encoding="utf-8") as f:
        return [line.rstrip("\n") for line in f if not line.startswith("#")]


def read_returns():
    lines = data_lines(RETURNS)
    names = lines[0].split(",")[1:]
    values = np.array([[float(v) for v in line.split(",")[1:]] for line in lines[1:]])
    return names, values


def eigh_descending(m):
    # numpy.linalg.eigh (LAPACK syevd) returns ascending order; we report largest first.
    w, v = np.linalg.eigh(m)
    order = np.argsort(w)[::-1]
    return w[order], v[:, order]


def main():
    names, r = read_returns()
    n = r.shape[0]
    assert r.shape == (1859, 4), r.shape

    r_rows = [line.split(",") for line in data_lines(R_FILE)[1:]]
    rows, notes = [], []
    cases = [
        ("numpy eigh(cov ddof=0)", "covariance", "n", np.cov(r, rowvar=False, ddof=0), None),
        ("numpy eigh(cov ddof=1)", "covariance", "n-1", np.cov(r, rowvar=False, ddof=1), "covariance"),
        ("numpy eigh(corrcoef)", "correlation", "none", np.corrcoef(r, rowvar=False), "correlation"),
    ]
    for source, matrix, denominator, m, r_matrix in cases:
        w, v = eigh_descending(m)
        for j in range(len(w)):
            rows.append([source, matrix, denominator, str(j + 1), repr(w[j])] + [repr(x) for x in v[:, j]])
        if r_matrix is None:
            continue
        # Cross-check with R: eigenvalues to 1e-12 relative, vectors up to sign to 1e-10.
        mine = [row for row in r_rows if row[1] == r_matrix]
        rw = np.array([float(row[4]) for row in mine])
        rv = np.array([[float(x) for x in row[5:]] for row in mine]).T
        dw = np.max(np.abs(w - rw) / np.abs(rw))
        dv = max(min(np.max(np.abs(v[:, j] - rv[:, j])), np.max(np.abs(v[:, j] + rv[:, j]))) for j in range(4))
        notes.append(f"{source} vs R eigen({'cov' if r_matrix == 'covariance' else 'cor'}(r)): "
                     f"max relative eigenvalue difference {dw:.1e}, max vector difference (up to sign) {dv:.1e}")
        if dw > 1e-12 or dv > 1e-10:
            sys.exit(f"numpy and R disagree: {notes[-1]}")

    # The ddof=0 eigenvalues are exactly (n - 1) / n times the ddof=1 ones.
    w0 = np.array([float(row[4]) for row in rows[0:4]])
    w1 = np.array([float(row[4]) for row in rows[4:8]])
    ratio = np.max(np.abs(w0 / w1 - (n - 1) / n))
    notes.append(f"ddof=0 / ddof=1 eigenvalue ratio minus (n-1)/n = {(n - 1) / n!r}: max {ratio:.1e}")

    header = [
        "Eigenpairs of the covariance and correlation of the log returns in eustock_returns.csv",
        "(R datasets::EuStockMarkets, r = diff(log(x)), n = 1859 dates x 4 indices).",
        "KEY REFERENCE for our engine: 'numpy eigh(cov ddof=0)', the maximum-likelihood covariance",
        "(denominator n = 1859), because the engine divides by the sum of the weights (n).",
        "calls: numpy.linalg.eigh(numpy.cov(r, rowvar=False, ddof=0)), the same with ddof=1,",
        "numpy.linalg.eigh(numpy.corrcoef(r, rowvar=False)), reordered largest first; the rows",
        "'R eigen(...)' are copied unchanged from eustock_pca_r.csv (R 4.2.2 eigen(), LAPACK dsyevr,",
        "cov() with denominator n - 1). Vector signs are arbitrary: compare up to a sign flip.",
        "Vector entries are in the column order " + ", ".join(names) + "; unit length.",
        *notes,
        f"tool: Debian python3 {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}",
        f"generated: {datetime.date.today().isoformat()} by tests/reference/make_eustock_pca.py",
    ]
    with open(OUT, "w", encoding="utf-8") as f:
        for line in header:
            f.write("# " + line + "\n")
        f.write(",".join(["source", "matrix", "denominator", "component", "eigenvalue"] + names) + "\n")
        for row in rows + r_rows:
            f.write(",".join(row) + "\n")


if __name__ == "__main__":
    main()
