#!/usr/bin/python3
"""Turns risk_bench's JSON lines from several rounds into the table of docs/performance.md.

    /usr/bin/python3 bench/risk_report.py RAW.jsonl

RAW holds the lines of every round (bench/run_all.sh tags each with "round" through
bench/quiet_run.py). Each figure is the median over rounds, with the per-round range in
brackets; the ratio peer / ours is taken within each round (the two ran in the same
process run) and its median reported. The verdict is on the median p99 against 5 ms.
"""
import json
import statistics
import sys

TARGET_US = 5000.0
CASES = [
    ("engine", "engine::portfolio_risk (2,000 names)"),
    ("get_json", "GET JSON, no benchmark (1 book)"),
    ("get_csv", "GET CSV, no benchmark"),
    ("post_json", "POST JSON weights"),
    ("get_json_benchmark", "GET JSON, with benchmark (3 books)"),
    ("get_csv_benchmark", "GET CSV, with benchmark"),
    ("cold", "cold: window read and indexed, then GET JSON"),
    ("load_window_risk_model", "reading and indexing the window alone"),
]


def median_range(values, digits=0):
    if not values:
        return "-"
    fmt = f"{{:,.{digits}f}}"
    m = fmt.format(statistics.median(values))
    return m if len(values) == 1 else f"{m} [{fmt.format(min(values))}-{fmt.format(max(values))}]"


def main():
    if len(sys.argv) != 2:
        sys.exit(__doc__)
    rows = [json.loads(line) for line in open(sys.argv[1]) if line.startswith("{")]
    by = {}
    for r in rows:
        by.setdefault((r.get("bench"), r.get("case")), []).append(r)
    config = next((r for r in rows if r.get("bench") == "risk_config"), {})
    rounds = sorted({r.get("round", 1) for r in rows if r.get("bench") == "risk"})
    print(f"Risk queries: {config.get('names')} names in a {config.get('assets')}-asset window, "
          f"k = {config.get('factors')} ({config.get('method')}); {config.get('queries')} queries after "
          f"{config.get('warmup')} warm-up per case; {len(rounds)} round(s); microseconds, median over rounds "
          "[per-round range]")
    print(f"{'case':48s} {'p50':>22s} {'p90':>8s} {'p99':>22s} {'max':>8s} {'body bytes':>11s}  target p99 < 5 ms")
    for case, label in CASES:
        got = by.get(("risk", case), [])
        if not got:
            continue
        p50 = [g["p50_us"] for g in got]
        p99 = [g["p99_us"] for g in got]
        verdict = ""
        if case.startswith(("get_", "post_")):
            verdict = "met" if statistics.median(p99) < TARGET_US else "MISSED"
        print(f"{label:48s} {median_range(p50):>22s} {statistics.median([g['p90_us'] for g in got]):8,.0f} "
              f"{median_range(p99):>22s} {statistics.median([g['max_us'] for g in got]):8,.0f} "
              f"{str(got[0].get('body_bytes', '')):>11s}  {verdict}")
    first = by.get(("risk", "cold_first"), [])
    if first:
        print(f"{'first query of the process (opens the connection)':48s} {median_range([g['p50_us'] for g in first]):>22s}")
    peer = by.get(("risk_peer", None), [])
    if peer:
        print(f"{'numpy peer, the engine case computed in numpy':48s} {median_range([p['p50_us'] for p in peer]):>22s} "
              f"{statistics.median([p['p90_us'] for p in peer]):8,.0f} {median_range([p['p99_us'] for p in peer]):>22s} "
              f"{statistics.median([p['max_us'] for p in peer]):8,.0f}")
        ratios = by.get(("risk_ratio", "engine"), [])
        if ratios:
            print(f"peer / ours, engine: p50 {median_range([r['peer_over_ours_p50'] for r in ratios], 2)}, "
                  f"p99 {median_range([r['peer_over_ours_p99'] for r in ratios], 2)}; figures agree to "
                  f"{max(p['max_relative_difference'] for p in peer):.1e} relative at worst "
                  f"({'all within' if all(p['agrees'] for p in peer) else 'NOT all within'} 1e-10)")
    splits = sorted({c for (b, c) in by if b == "risk_split"})
    if splits:
        print("\nThe GET path in parts (p50 [range], p99 median, microseconds):")
        for case in splits:
            got = by[("risk_split", case)]
            print(f"  {case:30s} {median_range([g['p50_us'] for g in got], 1):>24s} "
                  f"{statistics.median([g['p99_us'] for g in got]):10,.1f}")
    load = [r for r in rows if "others_cpu_share" in r]
    if load:
        print(f"\nother processes: at most {max(r['others_cpu_share'] for r in load):.1%} of the CPUs; steal at most "
              f"{max(r.get('steal_share', 0) for r in load):.1%}; disturbed runs kept: "
              f"{sum(1 for r in load if r.get('contended') and r.get('bench') == 'risk_config')}")


if __name__ == "__main__":
    main()
