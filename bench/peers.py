#!/usr/bin/python3
"""Times the peer implementations on the benchmark panel written by fit_bench.

    /usr/bin/python3 bench/peers.py --panel PATH --config NAME [--skip a,b] [--only a,b]

Reads the raw panel (int64 rows, int64 cols, then rows x cols little-endian float64,
row-major), keeps "today" (rows 1..T) and prints one JSON line per peer, after one line
describing the BLAS actually loaded (threadpoolctl). Timing: one call; when it took
under 2 s, two more, and the median of the three is reported.

Peers (all on today's T x N panel X):
  numpy_eigh     numpy.linalg.eigh(np.cov(X, rowvar=False, ddof=0)), covariance included
  scipy_eigsh    scipy.sparse.linalg.eigsh on a LinearOperator v -> Xc'(Xc v)/n, k=10,
                 which='LA', centring included
  sklearn_pca    sklearn PCA(n_components=10, svd_solver='randomized', random_state=0).fit(X)
  fa_lapack      sklearn FactorAnalysis(n_components=10, svd_method='lapack').fit(X)
  fa_randomized  sklearn FactorAnalysis(n_components=10, svd_method='randomized',
                 random_state=0).fit(X)
Eigenvalues are reported on the ddof=0 scale (S = Xc'Xc / n), like the engine's.
Factor-analysis log-likelihoods are per observation, -(1/2)[N log 2pi + log|Sigma| +
tr(Sigma^-1 S)] with S = Xc'Xc / n: the engine's convention and that of sklearn's
FactorAnalysis.score (mean of score_samples).
"""
import argparse
import json
import statistics
import sys
import time
import warnings

import numpy as np
import scipy
import scipy.sparse.linalg as spla
import sklearn
from sklearn.decomposition import PCA, FactorAnalysis
from sklearn.exceptions import ConvergenceWarning
from threadpoolctl import threadpool_info

K = 10
ALL_PEERS = ["numpy_eigh", "scipy_eigsh", "sklearn_pca", "fa_lapack", "fa_randomized"]


def emit(record):
    print(json.dumps(record), flush=True)


def read_panel(path):
    rows, cols = (int(v) for v in np.fromfile(path, dtype="<i8", count=2))
    values = np.fromfile(path, dtype="<f8", offset=16)
    if values.size != rows * cols:
        sys.exit(f"peers.py: {path}: expected {rows * cols} values, found {values.size}")
    return values.reshape(rows, cols)


def timed(call):
    """One call; if it took under 2 s, two more and the median of three."""
    times = []
    t0 = time.perf_counter()
    result = call()
    times.append(time.perf_counter() - t0)
    if times[0] < 2.0:
        for _ in range(2):
            t0 = time.perf_counter()
            result = call()
            times.append(time.perf_counter() - t0)
    return statistics.median(times), times, result


def fa_loglik_per_obs(X, components, noise_variance):
    """Gaussian log-likelihood per observation of Sigma = W'W + diag(psi), without N x N:
    determinant lemma for log|Sigma|, Woodbury for tr(Sigma^-1 S)."""
    n, p = X.shape
    Xc = X - X.mean(axis=0)
    W = components  # k x p
    psi = noise_variance
    A = (W / psi).T  # p x k, Psi^-1 W'
    M = np.eye(W.shape[0]) + W @ A
    sign, logdet_m = np.linalg.slogdet(M)
    logdet_sigma = logdet_m + np.log(psi).sum()
    s_diag = (Xc * Xc).sum(axis=0) / n
    XA = Xc @ A
    Q = XA.T @ XA / n
    trace = (s_diag / psi).sum() - np.trace(np.linalg.solve(M, Q))
    return -0.5 * (p * np.log(2.0 * np.pi) + logdet_sigma + trace)


def eigh_peer(X):
    def call():
        C = np.cov(X, rowvar=False, ddof=0)
        return np.linalg.eigh(C)[0]

    seconds, times, w = timed(call)
    return {"seconds": seconds, "times": times, "eigenvalues": w[::-1][:K].tolist()}


def eigsh_peer(X):
    n, p = X.shape
    v0 = np.random.default_rng(0).standard_normal(p)

    def call():
        Xc = X - X.mean(axis=0)
        op = spla.LinearOperator((p, p), matvec=lambda v: Xc.T @ (Xc @ v) / n, dtype=np.float64)
        return spla.eigsh(op, k=K, which="LA", v0=v0)[0]

    seconds, times, w = timed(call)
    return {"seconds": seconds, "times": times, "eigenvalues": np.sort(w)[::-1].tolist()}


def pca_peer(X):
    n = X.shape[0]

    def call():
        return PCA(n_components=K, svd_solver="randomized", random_state=0).fit(X)

    seconds, times, model = timed(call)
    # sklearn's explained_variance_ divides by n - 1; rescale to the ddof=0 convention.
    w = model.explained_variance_ * (n - 1) / n
    return {"seconds": seconds, "times": times, "eigenvalues": w.tolist()}


def fa_peer(X, svd_method, check_score):
    n = X.shape[0]

    def call():
        kwargs = {"random_state": 0} if svd_method == "randomized" else {}
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", ConvergenceWarning)
            model = FactorAnalysis(n_components=K, svd_method=svd_method, **kwargs).fit(X)
        model.convergence_warnings_ = [str(c.message) for c in caught if issubclass(c.category, ConvergenceWarning)]
        return model

    seconds, times, model = timed(call)
    out = {
        "seconds": seconds,
        "times": times,
        "n_iter": int(model.n_iter_),
        "max_iter": int(model.max_iter),
        "tol": float(model.tol),
        "converged": int(model.n_iter_) < int(model.max_iter) and not model.convergence_warnings_,
        "loglike_last_per_obs": float(model.loglike_[-1]) / n,
        "loglik_per_obs": float(fa_loglik_per_obs(X, model.components_, model.noise_variance_)),
    }
    if len(model.loglike_) >= 2:
        out["last_change_per_obs"] = (float(model.loglike_[-1]) - float(model.loglike_[-2])) / n
    if check_score:
        # sklearn's own score() forms the N x N precision; affordable at small N only.
        out["sklearn_score"] = float(model.score(X))
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--panel", required=True)
    ap.add_argument("--config", required=True, help="label for the environment (e.g. as-is, unset)")
    ap.add_argument("--only", default="", help="comma-separated subset of " + ",".join(ALL_PEERS))
    ap.add_argument("--skip", default="", help="peer=reason,... to skip with a stated reason")
    ap.add_argument("--check-score", action="store_true", help="also call sklearn's score() (N x N)")
    args = ap.parse_args()

    panel = read_panel(args.panel)
    X = np.ascontiguousarray(panel[1:])  # today: rows 1..T
    del panel
    n, p = X.shape
    wanted = [s for s in args.only.split(",") if s] or ALL_PEERS
    skip = dict(item.split("=", 1) if "=" in item else (item, "skipped") for item in args.skip.split(",") if item)

    np.linalg.eigh(np.eye(4))  # load the BLAS/LAPACK before asking what is loaded
    emit({
        "bench": "blas", "config": args.config, "assets": p, "periods": n,
        "numpy": np.__version__, "scipy": scipy.__version__, "sklearn": sklearn.__version__,
        "threadpool_info": threadpool_info(),
    })
    runners = {
        "numpy_eigh": lambda: eigh_peer(X),
        "scipy_eigsh": lambda: eigsh_peer(X),
        "sklearn_pca": lambda: pca_peer(X),
        "fa_lapack": lambda: fa_peer(X, "lapack", args.check_score),
        "fa_randomized": lambda: fa_peer(X, "randomized", args.check_score),
    }
    for name in wanted:
        record = {"bench": "peer", "peer": name, "config": args.config, "assets": p, "periods": n}
        if name in skip:
            record["skipped"] = skip[name]
        else:
            record.update(runners[name]())
        emit(record)


if __name__ == "__main__":
    main()
