#!/usr/bin/python3
"""The numpy peer of risk_bench: one portfolio's risk in a factor model, timed per call.

    /usr/bin/python3 bench/risk_peer.py --dir DIR [--queries 2000] [--warmup 50]

risk_bench writes DIR (see write_peer_files in bench/risk_bench.cpp): risk_model.bin
(int64 N, int64 k, then L as N x k and Phi as k x k, both row-major, and psi (N), all
little-endian float64), risk_assets.txt (the N names in row order), risk_weights.csv
(asset,weight in the portfolio's order) and risk_ours.json (the engine's figures).

Untimed, once, as the engine's RiskModel is built once per window: the dict from asset
name to row. Timed, per call, what engine::portfolio_risk computes for the same weights:

    rows   = [row[name] for name in the portfolio]        (dict lookups)
    L_S    = L[rows], psi_S = psi[rows]                   (gather the held rows)
    x      = L_S' w;  Phi x;  systematic = x' Phi x;  specific = w' (psi_S * w)
    sigma  = sqrt(systematic + specific)
    by factor: x_j (Phi x)_j / sigma;  specific: w' Psi w / sigma
    by asset:  marginal (L_S Phi x + psi_S w) / sigma, contribution w * marginal
    weight sums: net, gross, long, short

Latencies in microseconds, nearest-rank percentiles over --queries calls after --warmup
(risk_bench uses the same rule). The figures are checked against ours: every one within
1e-10 relative to its scale (the total variance for variances, sigma for contributions,
the largest absolute value of the vector for exposures and marginals). Prints one JSON
line, {"bench": "risk_peer", ...}.
"""
import argparse
import csv
import json
import math
import os
import sys
import time

import numpy as np

TOLERANCE = 1e-10


def read_model(directory):
    path = os.path.join(directory, "risk_model.bin")
    n, k = (int(v) for v in np.fromfile(path, dtype="<i8", count=2))
    values = np.fromfile(path, dtype="<f8", offset=16)
    if values.size != n * k + k * k + n:
        sys.exit(f"risk_peer.py: {path}: expected {n * k + k * k + n} values, found {values.size}")
    loadings = values[: n * k].reshape(n, k)
    phi = values[n * k: n * k + k * k].reshape(k, k)
    psi = values[n * k + k * k:]
    with open(os.path.join(directory, "risk_assets.txt")) as f:
        assets = f.read().splitlines()
    if len(assets) != n:
        sys.exit(f"risk_peer.py: risk_assets.txt has {len(assets)} names for {n} rows")
    return assets, np.ascontiguousarray(loadings), np.ascontiguousarray(phi), np.ascontiguousarray(psi)


def read_weights(directory):
    with open(os.path.join(directory, "risk_weights.csv"), newline="") as f:
        rows = list(csv.reader(f))
    if rows[0] != ["asset", "weight"]:
        sys.exit("risk_peer.py: risk_weights.csv must start with asset,weight")
    return [r[0] for r in rows[1:]], np.array([float(r[1]) for r in rows[1:]])


def portfolio_risk(row_of, loadings, phi, psi, names, w):
    rows = np.fromiter((row_of[name] for name in names), dtype=np.intp, count=len(names))
    held = loadings[rows]
    psi_held = psi[rows]
    x = held.T @ w
    phi_x = phi @ x
    systematic = float(x @ phi_x)
    psi_w = psi_held * w
    specific = float(w @ psi_w)
    total = systematic + specific
    sigma = math.sqrt(max(total, 0.0))
    per_sigma = 1.0 / sigma if sigma > 0 else 0.0
    marginal = (held @ phi_x + psi_w) * per_sigma
    return {
        "total_variance": total,
        "systematic_variance": systematic,
        "specific_variance": specific,
        "volatility": sigma,
        "exposures": x,
        "factor_contribution": x * phi_x * per_sigma,
        "specific_contribution": specific * per_sigma,
        "asset_contribution": w * marginal,
        "marginal": marginal,
        "net": float(w.sum()),
        "gross": float(np.abs(w).sum()),
        "long": float(w[w > 0].sum()),
        "short": float(w[w < 0].sum()),
    }


def max_relative_difference(peer, ours):
    """The largest difference over all figures, each relative to its scale."""
    total = ours["total_variance"]
    sigma = ours["volatility"]
    checks = [
        ("total_variance", total), ("systematic_variance", total), ("specific_variance", total),
        ("volatility", sigma), ("specific_contribution", sigma), ("factor_contribution", sigma),
        ("asset_contribution", sigma), ("net", ours["gross"]), ("gross", ours["gross"]),
        ("exposures", float(np.max(np.abs(ours["exposures"])))),
        ("marginal", float(np.max(np.abs(ours["marginal"])))),
    ]
    worst, where = 0.0, ""
    for name, scale in checks:
        ours_value = np.asarray(ours[name], dtype=float)
        peer_value = np.asarray(peer[name], dtype=float)
        if ours_value.shape != peer_value.shape:
            return math.inf, f"{name}: {peer_value.shape} against {ours_value.shape}"
        d = float(np.max(np.abs(peer_value - ours_value))) / scale if ours_value.size else 0.0
        if d > worst or not math.isfinite(d):
            worst, where = d, name
    return worst, where


def percentile(sorted_us, p):
    """Nearest rank: the smallest value with at least p of the sample at or below it."""
    rank = max(1, math.ceil(p * len(sorted_us)))
    return sorted_us[min(rank, len(sorted_us)) - 1]


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--dir", required=True)
    ap.add_argument("--queries", type=int, default=2000)
    ap.add_argument("--warmup", type=int, default=50)
    a = ap.parse_args()

    assets, loadings, phi, psi = read_model(a.dir)
    names, w = read_weights(a.dir)
    with open(os.path.join(a.dir, "risk_ours.json")) as f:
        ours = json.load(f)
    row_of = {name: i for i, name in enumerate(assets)}  # built once, as the engine's index

    for _ in range(a.warmup):
        portfolio_risk(row_of, loadings, phi, psi, names, w)
    us = []
    clock = time.perf_counter_ns
    for _ in range(a.queries):
        t0 = clock()
        result = portfolio_risk(row_of, loadings, phi, psi, names, w)
        us.append((clock() - t0) / 1e3)
    us.sort()

    worst, where = max_relative_difference(result, ours)
    try:
        from threadpoolctl import threadpool_info
        blas = [f"{i.get('internal_api')} {i.get('version')} ({i.get('num_threads')} threads)"
                for i in threadpool_info() if i.get("user_api") == "blas"]
    except ImportError:
        blas = []
    print(json.dumps({
        "bench": "risk_peer", "peer": "numpy", "numpy": np.__version__, "python": sys.version.split()[0],
        "blas": blas, "names": len(names), "assets": len(assets), "factors": int(loadings.shape[1]),
        "queries": a.queries, "warmup": a.warmup,
        "p50_us": round(percentile(us, 0.50), 2), "p90_us": round(percentile(us, 0.90), 2),
        "p99_us": round(percentile(us, 0.99), 2), "max_us": round(us[-1], 2),
        "mean_us": round(sum(us) / len(us), 2),
        "max_relative_difference": worst, "worst_figure": where, "agrees": bool(worst <= TOLERANCE),
    }), flush=True)
    return 0 if worst <= TOLERANCE else 1


if __name__ == "__main__":
    sys.exit(main())
