#!/usr/bin/python3
"""Cross-checks R's upper-tail chi-square probabilities with scipy.stats.chi2.sf.

Run from this folder after make_chi_square_sf.R:  /usr/bin/python3 make_chi_square_sf.py
Reads chi_square_sf_r.csv, writes chi_square_sf.csv with both columns side by side, and
fails when the two libraries differ by more than 1e-12 relative anywhere.
"""
import datetime
import sys

import numpy as np
import scipy
from scipy.stats import chi2

R_FILE = "chi_square_sf_r.csv"
OUT = "chi_square_sf.csv"
LIMIT = 1e-12


def main():
    with open(R_FILE, encoding="utf-8") as f:
        lines = [line.rstrip("\n") for line in f if not line.startswith("#")]
    rows, worst = [], 0.0
    for line in lines[1:]:
        df, x, point, r_value = line.split(",")
        sf = float(chi2.sf(float(x), float(df)))
        r = float(r_value)
        # Relative difference; both exactly zero (underflow in both) counts as agreement.
        rel = 0.0 if r == sf else abs(sf - r) / max(abs(r), abs(sf))
        worst = max(worst, rel)
        rows.append([df, x, point, r_value, repr(sf), f"{rel:.3e}"])
    if worst > LIMIT:
        sys.exit(f"R and scipy disagree: max relative difference {worst:.3e} > {LIMIT}")

    header = [
        "Upper-tail chi-square probabilities P(X > x), X ~ chi-square(df), from two libraries:",
        "r_pchisq_upper: R 4.2.2 stats::pchisq(x, df, lower.tail = FALSE), copied from chi_square_sf_r.csv",
        "(x = qchisq(p, df) for the 'quantile p' rows; see make_chi_square_sf.R);",
        "scipy_chi2_sf: scipy.stats.chi2.sf(x, df) on the same x (parsed from its 17-digit text);",
        f"relative_difference = |a - b| / max(|a|, |b|) (0 when both are 0); maximum {worst:.2e} <= {LIMIT}.",
        f"tool: Debian python3 {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}",
        f"generated: {datetime.date.today().isoformat()} by tests/reference/make_chi_square_sf.py",
    ]
    with open(OUT, "w", encoding="utf-8") as f:
        for line in header:
            f.write("# " + line + "\n")
        f.write("df,x,point,r_pchisq_upper,scipy_chi2_sf,relative_difference\n")
        for row in rows:
            f.write(",".join(row) + "\n")


if __name__ == "__main__":
    main()
