#!/usr/bin/python3
"""Turns the raw JSON lines of bench/run_all.sh into the summary tables.

    /usr/bin/python3 bench/report.py table RAW.jsonl
    /usr/bin/python3 bench/report.py skip RAW.jsonl --assets N --config NAME [--budget S]

`table` prints the BLAS each peer configuration loaded, the numerical checks (peer
eigenvalues against ours, factor-analysis log-likelihoods against ours), the main table,
the stage split, the compiler-flag comparison and the targets. A configuration measured
in several rounds is reported by the median over rounds (with the range where it
matters). `skip` prints a --skip argument for peers.py: the peers whose predicted time
at N (scaled from the largest N already measured in the same configuration) exceeds
the budget.
"""
import argparse
import json
import math
import statistics
import sys

EIGEN_RTOL = 1e-8
PCA_PEERS = ["numpy_eigh", "scipy_eigsh", "sklearn_pca"]
EXACT_PEERS = ["numpy_eigh", "scipy_eigsh"]  # randomized PCA is approximate by design
# Cost growth in N at fixed T: covariance + dense eigh ~ N^3; SVD of the T x N panel ~ N.
SCALING = {"numpy_eigh": 3.0, "fa_lapack": 1.0}
TARGET_N = 5000


def load(path):
    out = []
    with open(path) as f:
        for line in f:
            line = line.strip()
            if line.startswith("{"):
                try:
                    out.append(json.loads(line))
                except json.JSONDecodeError:
                    pass
    return out


def ours(records, method, n, eigenvalues=0):
    """Our result for a method at N (eigenvalues=0: the engine's default count, 2k + 10),
    with call_seconds the median over rounds and call_rounds the per-round medians."""
    runs = [r for r in records if r.get("bench") == "fit" and r.get("method") == method
            and r.get("assets") == n and r.get("eigenvalues_requested", 0) == eigenvalues]
    if not runs:
        return None
    out = dict(runs[0])
    out["call_rounds"] = [r["call_seconds"] for r in runs]
    out["call_seconds"] = statistics.median(out["call_rounds"])
    out["peak_rss_bytes"] = max(r["peak_rss_bytes"] for r in runs)
    return out


def peer_runs(records, name, n, config=None):
    return [r for r in records if r.get("bench") == "peer" and r.get("peer") == name and r.get("assets") == n
            and (config is None or r.get("config") == config)]


def peer(records, name, n, config):
    """A peer at N in one configuration: median seconds over rounds, or None if never timed."""
    runs = [r for r in peer_runs(records, name, n, config) if "seconds" in r]
    if not runs:
        return None
    out = dict(runs[0])
    out["rounds"] = [r["seconds"] for r in runs]
    out["seconds"] = statistics.median(out["rounds"])
    return out


def max_rel_diff(a, b):
    k = min(len(a), len(b))
    return max(abs(a[i] - b[i]) / abs(b[i]) for i in range(k)) if k else math.nan


def config_valid(records, config, ref_by_n):
    """A BLAS configuration is valid when its exact eigen-solvers reproduce our
    eigenvalues to EIGEN_RTOL wherever both ran."""
    checked = 0
    for r in records:
        if r.get("bench") == "peer" and r.get("config") == config and r.get("peer") in EXACT_PEERS:
            ref = ref_by_n.get(r["assets"])
            if ref is None or "eigenvalues" not in r:
                continue
            checked += 1
            if not max_rel_diff(r["eigenvalues"], ref) <= EIGEN_RTOL:
                return False
    return checked > 0


def best_peer(records, name, n, valid_configs):
    runs = [p for p in (peer(records, name, n, c) for c in valid_configs) if p]
    return min(runs, key=lambda r: r["seconds"]) if runs else None


def fmt(x, digits=3):
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "-"
    if abs(x) >= 100:
        return f"{x:.0f}"
    return f"{x:.{digits}g}"


def spread(values):
    return f"{min(values):.3g}-{max(values):.3g}" if len(values) > 1 else f"{values[0]:.3g}"


def ratio(a, b):
    return a / b if a is not None and b else None


def table(records):
    sizes = sorted({r["assets"] for r in records if r.get("bench") == "fit"})
    configs = sorted({r["config"] for r in records if r.get("bench") == "blas"})
    ref_by_n = {n: ours(records, "pca", n)["eigenvalues"] for n in sizes if ours(records, "pca", n)}
    lines = []
    say = lines.append

    machine = [r for r in records if r.get("bench") == "machine"]
    if machine:
        m = machine[-1]
        say(f"Machine: {m.get('cpu')}, {m.get('cpus')} CPUs, {m.get('memory_gib')} GiB; {m.get('compiler')}")
        say(f"Flags ({m.get('build_type')}): {m.get('flags')}")
        say(f"Source: commit {m.get('commit')}, engine sources {m.get('engine_state')}")
    timed = [r for r in records if "others_cpu_share" in r]
    if timed:
        contended = sum(1 for r in timed if r.get("contended"))
        say(f"Load during the timed runs: other processes used at most "
            f"{max(r['others_cpu_share'] for r in timed):.1%} of the CPUs, hypervisor steal at most "
            f"{max(r['steal_share'] for r in timed):.1%}; {contended} run(s) kept although disturbed")
    say("")
    say("BLAS seen by the peers (threadpoolctl):")
    for c in configs:
        info = next(r for r in records if r.get("bench") == "blas" and r["config"] == c)
        blas = [d for d in info["threadpool_info"] if d.get("user_api") == "blas"]
        desc = "; ".join(f"{d.get('internal_api')} {d.get('version')} kernel {d.get('architecture')}, "
                         f"{d.get('num_threads')} threads ({d.get('filepath')})" for d in blas) or "none"
        say(f"  {c:8s} {desc}")
    valid = [c for c in configs if config_valid(records, c, ref_by_n)]
    say(f"  valid configurations (exact peers match our eigenvalues to {EIGEN_RTOL:g} relative): "
        f"{', '.join(valid) or 'none'}")
    say("")

    say("Peers per configuration: median seconds (rounds), max relative eigenvalue difference vs ours;")
    say("factor analysis: final log-likelihood per observation minus ours, iterations:")
    for n in sizes:
        ml = ours(records, "ml", n)
        for name in PCA_PEERS + ["fa_lapack", "fa_randomized"]:
            for c in configs:
                p = peer(records, name, n, c)
                if p is None:
                    why = next((r["skipped"] for r in peer_runs(records, name, n, c) if "skipped" in r), None)
                    if why:
                        say(f"  N={n:<6d} {name:14s} {c:8s} skipped: {why}")
                    continue
                head = f"  N={n:<6d} {name:14s} {c:8s} {p['seconds']:8.4f} s ({len(p['rounds'])})"
                if "eigenvalues" in p:
                    say(f"{head}  eig rel diff {max_rel_diff(p['eigenvalues'], ref_by_n.get(n, [])):.1e}")
                else:
                    dll = p["loglik_per_obs"] - ml["log_likelihood"] if ml else math.nan
                    note = "" if p["converged"] else " (hit max_iter)"
                    if p.get("last_change_per_obs", 0) < 0:
                        note += "; its last step lowered the likelihood"
                    say(f"{head}  loglik - ours {dll:+.2e}, n_iter {p['n_iter']}{note}")
    say("")

    head = ("N", "PCA s", "PCA10 s", "best PCA peer s", "(peer, config)", "ratio", "exact peer s", "ratio",
            "Gram s", "PCA/Gram", "PCA warm s", "cold/warm",
            "ML cold s", "iters", "FA lapack s", "FA rand s", "lapack/ML", "rand/ML", "ML warm s", "iters",
            "cold/warm", "peak RSS MB", "RSS/panel")
    rows = []
    summary = {}
    for n in sizes:
        pca, ml, warm = ours(records, "pca", n), ours(records, "ml", n), ours(records, "ml-warm", n)
        pca10 = ours(records, "pca", n, eigenvalues=10)
        pca_warm = ours(records, "pca-warm", n)
        grams = [r["seconds"] for r in records if r.get("bench") == "stage" and r.get("stage") == "gram_matrix"
                 and r.get("assets") == n]
        gram = statistics.median(grams) if grams else None
        cands = [b for b in (best_peer(records, p, n, valid) for p in PCA_PEERS) if b]
        fastest = min(cands, key=lambda r: r["seconds"]) if cands else None
        exact = [b for b in (best_peer(records, p, n, valid) for p in EXACT_PEERS) if b]
        fastest_exact = min(exact, key=lambda r: r["seconds"]) if exact else None
        fa_l = best_peer(records, "fa_lapack", n, valid)
        fa_r = best_peer(records, "fa_randomized", n, valid)
        fits = [r for r in (pca, pca10, pca_warm, ml, warm) if r]
        rss = max(r["peak_rss_bytes"] for r in fits)
        panel = fits[0]["panel_bytes"]
        s = {"pca": pca, "pca10": pca10, "pca_warm": pca_warm, "gram": gram, "ml": ml, "warm": warm,
             "peer": fastest, "exact": fastest_exact, "fa_l": fa_l, "fa_r": fa_r, "rss_ratio": rss / panel}
        summary[n] = s
        sec = lambda r, key="call_seconds": r[key] if r else None
        rows.append((
            str(n), fmt(sec(pca)), fmt(sec(pca10)), fmt(sec(fastest, "seconds")),
            f"{fastest['peer']}, {fastest['config']}" if fastest else "-",
            fmt(ratio(sec(fastest, "seconds"), sec(pca))), fmt(sec(fastest_exact, "seconds")),
            fmt(ratio(sec(fastest_exact, "seconds"), sec(pca))),
            fmt(gram), fmt(ratio(sec(pca), gram)), fmt(sec(pca_warm)), fmt(ratio(sec(pca), sec(pca_warm))),
            fmt(sec(ml)), str(ml["iterations"]) if ml else "-",
            fmt(sec(fa_l, "seconds")) if fa_l else "skipped", fmt(sec(fa_r, "seconds")),
            fmt(ratio(sec(fa_l, "seconds"), sec(ml))), fmt(ratio(sec(fa_r, "seconds"), sec(ml))),
            fmt(sec(warm)), str(warm["iterations"]) if warm else "-", fmt(ratio(sec(ml), sec(warm))),
            f"{rss / 2**20:.1f}", f"{rss / panel:.2f}"))
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(head)]
    say(" | ".join(h.rjust(w) for h, w in zip(head, widths)))
    say("-+-".join("-" * w for w in widths))
    for r in rows:
        say(" | ".join(c.rjust(w) for c, w in zip(r, widths)))
    say("Times: medians of 5 whole fit() calls (ours) or of 3 peer calls (1 if over 2 s), then the median")
    say("over rounds where N was measured more than once. Ratios are peer / ours, and cold / warm. PCA is")
    say("our default call (2k + 10 = 30 eigenvalues); PCA10 reports 10 eigenvalues, as the peers do. The")
    say("best PCA peer includes sklearn's randomized PCA (approximate); the exact peer is eigh or eigsh.")
    say("Gram is the T x T Gram matrix of the prepared panel alone (stage_bench --only gram). Warm fits")
    say("carry yesterday's window products (and, for ML, start from yesterday's fit); iters are ML's")
    say("iterations (fixed-point evaluations + EM passes + Newton steps).")
    say("Peak RSS is the largest of our runs at that N; RSS/panel divides it by 8 T N bytes.")
    say("")

    stages = [r for r in records if r.get("bench") == "stage" and r.get("assets", TARGET_N) == TARGET_N]
    if stages:
        cfg = next((r for r in records if r.get("bench") == "stage_config" and r.get("assets") == TARGET_N), {})
        say(f"Stage split at N = {cfg.get('assets')} (median over rounds of medians, milliseconds):")
        names = list(dict.fromkeys(r["stage"] for r in stages))
        for name in names:
            runs = [r for r in stages if r["stage"] == name]
            ms = statistics.median(r["seconds"] for r in runs) * 1e3
            extra = {k: v for k, v in runs[0].items() if k not in ("bench", "stage", "seconds", "others_cpu_share",
                                                                    "steal_share", "tries", "round")}
            if "passes" in extra:
                extra["ms_per_pass"] = round(ms / extra["passes"], 3)
                extra.pop("seconds_per_pass", None)
            say(f"  {name:32s} {ms:8.2f}  {json.dumps(extra) if extra else ''}")
        say("")

    flags = [r for r in records if r.get("bench") == "flags"]
    if flags:
        say(f"Compiler-flag comparison at N = {TARGET_N} (median over rounds of the median whole call, ms):")
        for build in dict.fromkeys(r["build"] for r in flags):
            runs = [r for r in flags if r["build"] == build]
            pca_ms = [r["pca_seconds"] * 1e3 for r in runs]
            ml_ms = [r["ml_seconds"] * 1e3 for r in runs]
            say(f"  {build:32s} PCA {statistics.median(pca_ms):6.1f} (range {spread(pca_ms)})  "
                f"ML {statistics.median(ml_ms):6.1f} (range {spread(ml_ms)}), {runs[0]['ml_iterations']} passes")
        say("")

    def check(name, ok, value, detail):
        say(f"  {'MET   ' if ok else 'MISSED'} {name}: {value}  [{detail}]")

    say("Targets (median over rounds where N was measured more than once):")
    for n, s in summary.items():
        pca, ml, warm, pca_warm = s["pca"], s["ml"], s["warm"], s["pca_warm"]
        if n in (5000, 10000, 20000):
            for key, label, times in (("fa_l", "FA lapack", 15), ("fa_r", "FA randomized", 2)):
                if ml and s[key]:
                    r = s[key]["seconds"] / ml["call_seconds"]
                    check(f"N={n}: ML >= {times}x {label}", r >= times, f"{r:.2f}x",
                          f"ours {spread(ml['call_rounds'])} s, {label} ({s[key]['config']}) "
                          f"{spread(s[key]['rounds'])} s")
            if pca and s["gram"]:
                r = pca["call_seconds"] / s["gram"]
                check(f"N={n}: PCA within 2x of the Gram matrix", r <= 2, f"{r:.2f}x",
                      f"PCA {spread(pca['call_rounds'])} s, Gram {s['gram']:.4f} s")
            if pca and s["peer"]:
                r = s["peer"]["seconds"] / pca["call_seconds"]
                check(f"N={n}: PCA >= 3x the fastest peer", r >= 3, f"{r:.2f}x",
                      f"ours {spread(pca['call_rounds'])} s, {s['peer']['peer']} ({s['peer']['config']}) "
                      f"{spread(s['peer']['rounds'])} s")
        if n == TARGET_N:
            if ml and warm:
                r = ml["call_seconds"] / warm["call_seconds"]
                check(f"N={n}: warm ML refit >= 4x faster than cold", r >= 4, f"{r:.2f}x",
                      f"cold {spread(ml['call_rounds'])} s, warm {spread(warm['call_rounds'])} s")
            if pca and pca_warm:
                r = pca["call_seconds"] / pca_warm["call_seconds"]
                check(f"N={n}: warm PCA refit >= 4x faster than cold", r >= 4, f"{r:.2f}x",
                      f"cold {spread(pca['call_rounds'])} s, warm {spread(pca_warm['call_rounds'])} s")
        check(f"N={n}: peak RSS < 4x panel", s["rss_ratio"] < 4, f"{s['rss_ratio']:.2f}x",
              "largest of our runs" + (f"; PCA {pca['call_seconds']:.2f} s, ML {ml['call_seconds']:.2f} s"
                                       if pca and ml else ""))
    return "\n".join(lines)


def skip(records, n, config, budget):
    out = []
    for name, power in SCALING.items():
        done = [r for r in records if r.get("bench") == "peer" and r.get("peer") == name
                and r.get("config") == config and "seconds" in r and r["assets"] < n]
        if not done:
            continue
        ref = max(done, key=lambda r: r["assets"])
        predicted = ref["seconds"] * (n / ref["assets"]) ** power
        if predicted > budget:
            out.append(f"{name}=predicted {predicted:.0f} s (N^{power:g} from {ref['seconds']:.1f} s "
                       f"at N={ref['assets']}) over the {budget:.0f} s budget")
    return ",".join(out)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("mode", choices=["table", "skip"])
    ap.add_argument("raw")
    ap.add_argument("--assets", type=int)
    ap.add_argument("--config")
    ap.add_argument("--budget", type=float, default=120.0)
    a = ap.parse_args()
    records = load(a.raw)
    if a.mode == "table":
        print(table(records))
    else:
        if a.assets is None or a.config is None:
            sys.exit("report.py skip needs --assets and --config")
        print(skip(records, a.assets, a.config, a.budget))


if __name__ == "__main__":
    main()
