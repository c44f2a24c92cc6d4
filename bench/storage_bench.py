#!/usr/bin/python3
"""Storage benchmark: the real `factorwatch load` and `factorwatch refresh` commands
against general-purpose peers on the same data, in the same run.

    /usr/bin/python3 bench/storage_bench.py [--rounds 3] [--build DIR] [--no-build]
                                            [--only ingest|refresh] [--sample 10] [--keep-data]

Ingest (target: under 15 s): 5,000 assets x 2,520 dates, a long CSV date,asset,return of
12.6 million rows (about 360 MB) written by bench/storage_data.cpp, read once before each
timed run so that it is in the page cache. Timed, each as a whole process (start to exit):
  ours   `factorwatch --data DIR load FILE` into a fresh data directory (cold database),
         then the same file again (no change), then the next night's file (5,000 rows);
  peer   the Debian sqlite3 shell: `.mode csv` and `.import --skip 1 FILE returns` inside
         BEGIN/COMMIT into a fresh database, table (date TEXT, asset TEXT, "return" REAL),
         and again with PRIMARY KEY (date, asset) WITHOUT ROWID; then the nightly file
         into each full table.

Refresh (target: under 10 s): 2,000 assets x 753 dates of the planted panel, loaded once
with `factorwatch load`; model `bench` = ml, 10 factors, window 504, first as-of the date
of index 503, so that exactly 250 windows are fitted. Each round copies the loaded
database to a fresh directory and times `factorwatch refresh bench --quiet`; the split
reading / fitting / writing, and the second pass (every window aligned onto the previous
one by Procrustes, drift against the previous and the first window stored, alerts), are
parsed from its summary.
  peer   scikit-learn FactorAnalysis(n_components=10) with svd_method='lapack' and
         'randomized' on --sample windows evenly spread over the 250 (the same dates,
         values read from the same CSV, untimed), tol set to 1e-8 of |log-likelihood|
         (our stopping rule; measured on an untimed pilot fit), one fit per window from
         scratch; per-window mean x 250 = the extrapolated backfill. Run under the BLAS
         environment as-is and with OPENBLAS_CORETYPE / OPENBLAS_L2_SIZE unset; the faster
         is reported.

Every timed command waits for a quiet machine and is repeated when a compiler or other
load appeared while it ran (the rules of bench/quiet_run.py). Results: raw JSON lines in
OUT/storage_raw.jsonl, the report in OUT/storage_bench.txt (OUT defaults to
build-storagebench/results). Data go to a temporary directory under /tmp, removed at
the end unless --keep-data. About 10 minutes for 3 rounds on a quiet 2-core machine.

`storage_bench.py report RAW.jsonl` prints the report again from the raw lines;
`storage_bench.py fa-peer --csv FILE ...` is the scikit-learn peer process itself.
"""
import argparse
import json
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
sys.path.insert(0, HERE)

INGEST_ASSETS, INGEST_DATES = 5000, 2520
REFRESH_ASSETS, REFRESH_DATES, WINDOW, FACTORS = 2000, 753, 504, 10
REFRESH_WINDOWS = REFRESH_DATES - WINDOW + 1  # 250
INGEST_TARGET_S, REFRESH_TARGET_S = 15.0, 10.0
OTHERS_LIMIT = 0.05
TOLERANCE = 1e-8  # the engine's default: relative change of the log-likelihood


def log(msg):
    print(f"[storage_bench] {msg}", file=sys.stderr, flush=True)


# ---------------------------------------------------------------------------------------
# Timing a whole process on a quiet machine.

def timed_process(cmd, tag, stdin_path=None, env=None, setup=None, tries=5, max_wait=1800):
    """Runs cmd to completion after the machine is quiet (quiet_run.wait_quiet); wall time
    from just before the fork to the child's exit (os.wait4, no polling delay). Repeats a
    run during which a compiler appeared or other processes used more than 5% of the CPUs;
    setup() (untimed) restores the starting state before every attempt."""
    import quiet_run as q
    for attempt in range(1, tries + 1):
        q.wait_quiet(max_wait)
        if setup:
            setup()
        saw_compiler = threading.Event()
        done = threading.Event()

        def watch():
            while not done.wait(0.2):
                if q.compilers():
                    saw_compiler.set()

        watcher = threading.Thread(target=watch, daemon=True)
        with tempfile.TemporaryFile("w+") as out, tempfile.TemporaryFile("w+") as err:
            stdin = open(stdin_path) if stdin_path else subprocess.DEVNULL
            busy0, _, steal0 = q.cpu_times()
            watcher.start()
            t0 = time.perf_counter()
            child = subprocess.Popen(cmd, stdin=stdin, stdout=out, stderr=err, env=env)
            _, status, usage = os.wait4(child.pid, 0)
            elapsed = time.perf_counter() - t0
            done.set()
            watcher.join()
            busy1, _, steal1 = q.cpu_times()
            if stdin_path:
                stdin.close()
            out.seek(0)
            err.seek(0)
            stdout, stderr = out.read(), err.read()
        code = os.waitstatus_to_exitcode(status)
        child.returncode = code
        cpu = usage.ru_utime + usage.ru_stime
        others = max(0.0, (busy1 - busy0) - cpu) / (elapsed * q.NCPU)
        steal = (steal1 - steal0) / (elapsed * q.NCPU)
        clean = not saw_compiler.is_set() and others <= OTHERS_LIMIT
        if code != 0:
            log(f"{tag}: exit status {code}: {' '.join(cmd)}\n{stderr[-2000:]}")
            raise SystemExit(1)
        if clean or attempt == tries:
            break
        log(f"{tag}: attempt {attempt} disturbed (compiler: {saw_compiler.is_set()}, others {others:.1%}); repeating")
    return {"seconds": elapsed, "cpu_seconds": cpu, "peak_rss_bytes": usage.ru_maxrss * 1024,
            "others_cpu_share": round(others, 4), "steal_share": round(steal, 4), "tries": attempt,
            "contended": not clean, "stdout": stdout, "stderr": stderr}


def warm_page_cache(path):
    with open(path, "rb") as f:
        while f.read(1 << 24):
            pass


def remove(path):
    if os.path.isdir(path):
        shutil.rmtree(path)
    elif os.path.exists(path):
        os.remove(path)


def directory_bytes(path):
    return sum(os.path.getsize(os.path.join(path, f)) for f in os.listdir(path))


# ---------------------------------------------------------------------------------------
# Parsing our commands' summaries (best effort: a changed wording leaves fields out).

def parse_load(text):
    out = {}
    m = re.search(r"outcome:\s+(.+?) \(ingest run \d+\), ([\d.]+) s \(reading ([\d.]+) s, storing ([\d.]+) s\)", text)
    if m:
        out.update(outcome=m.group(1), summary_seconds=float(m.group(2)), read_seconds=float(m.group(3)),
                   store_seconds=float(m.group(4)))
    m = re.search(r"values:\s+([\d,]+) new, ([\d,]+) unchanged, ([\d,]+) corrected", text)
    if m:
        out.update(values_new=int(m.group(1).replace(",", "")), values_unchanged=int(m.group(2).replace(",", "")),
                   values_corrected=int(m.group(3).replace(",", "")))
    return out


def parse_refresh(text):
    out = {}
    m = re.search(r"(\d+) windows? fitted", text)
    if m:
        out["fitted"] = int(m.group(1))
    m = re.search(r"([\d.]+) s: reading ([\d.]+) s, fitting ([\d.]+) s, writing ([\d.]+) s", text)
    if m:
        out.update(summary_seconds=float(m.group(1)), read_seconds=float(m.group(2)),
                   fit_seconds=float(m.group(3)), write_seconds=float(m.group(4)))
    m = re.search(r"(\d+) unusable", text)
    if m:
        out["unusable"] = int(m.group(1))
    # The second pass (alignment and drift), inside the summary's total.
    m = re.search(r"(\d+) windows? aligned, (\d+) drift alerts? raised \(([\d.]+) s\)", text)
    if m:
        out.update(aligned=int(m.group(1)), alerts=int(m.group(2)), align_seconds=float(m.group(3)))
    return out


def parse_windows(text):
    """`factorwatch windows bench`: as-of -> iterations, log-likelihood per observation, fit ms."""
    rows = {}
    pat = re.compile(r"^(\d{4}-\d\d-\d\d)\s+\d{4}-\d\d-\d\d\s+(\d+)\s+(\d+)\s+\d+\s+\d+\s+(\S+)\s+(\d+)\s+"
                     r"(-?[\d.]+)\s+[\d.]+%\s+\d+\s+([\d.]+)")
    for line in text.splitlines():
        m = pat.match(line)
        if m:
            rows[m.group(1)] = {"termination": m.group(4), "iterations": int(m.group(5)),
                                "loglik_per_obs": float(m.group(6)), "fit_ms": float(m.group(7))}
    return rows


# ---------------------------------------------------------------------------------------
# The scikit-learn peer (runs as its own process).

def read_long_csv(path):
    """Long CSV -> (sorted dates, assets in first-appearance order, values dates x assets)."""
    import csv

    import numpy as np
    dates, assets, cells = {}, {}, []
    with open(path, newline="") as f:
        reader = csv.reader(f)
        next(reader)
        for d, a, r in reader:
            di = dates.setdefault(d, len(dates))
            ai = assets.setdefault(a, len(assets))
            cells.append((di, ai, float(r)))
    order = sorted(dates, key=lambda d: d)
    row_of = {dates[d]: i for i, d in enumerate(order)}
    X = np.full((len(dates), len(assets)), np.nan)
    for di, ai, v in cells:
        X[row_of[di], ai] = v
    return order, list(assets), X


def fa_peer(args):
    import warnings

    import numpy as np
    import sklearn
    from sklearn.decomposition import FactorAnalysis
    from sklearn.exceptions import ConvergenceWarning
    from threadpoolctl import threadpool_info

    from peers import fa_loglik_per_obs

    t0 = time.perf_counter()
    dates, assets, X = read_long_csv(args.csv)
    read_seconds = time.perf_counter() - t0
    windows = len(dates) - args.window + 1
    sample = sorted({int(round(x)) for x in np.linspace(0, windows - 1, args.sample)})
    np.linalg.eigh(np.eye(4))  # load the BLAS before asking what is loaded
    blas = [f"{d.get('internal_api')} {d.get('version')} {d.get('architecture')} {d.get('num_threads')} threads"
            for d in threadpool_info() if d.get("user_api") == "blas"]
    # sklearn stops when the total log-likelihood (n x per observation) rose by less than
    # tol; ours when the relative change is below 1e-8. An untimed pilot fit gives |ll|.
    first = np.ascontiguousarray(X[sample[0]:sample[0] + args.window])
    pilot = FactorAnalysis(n_components=args.factors, svd_method="lapack").fit(first)
    tol = TOLERANCE * abs(float(pilot.loglike_[-1]))
    print(json.dumps({"bench": "fa_peer_setup", "config": args.config, "csv_read_seconds": read_seconds,
                      "windows": windows, "sample": sample, "tol": tol, "tol_relative": TOLERANCE,
                      "sklearn": sklearn.__version__, "numpy": np.__version__, "blas": blas}), flush=True)
    for method in ("lapack", "randomized"):
        for w in sample:
            Xw = np.ascontiguousarray(X[w:w + args.window])
            kwargs = {"random_state": 0} if method == "randomized" else {}
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", ConvergenceWarning)
                t0 = time.perf_counter()
                model = FactorAnalysis(n_components=args.factors, svd_method=method, tol=tol, **kwargs).fit(Xw)
                seconds = time.perf_counter() - t0
            print(json.dumps({
                "bench": "fa_peer", "config": args.config, "method": method, "window": w,
                "as_of": dates[w + args.window - 1], "seconds": seconds, "n_iter": int(model.n_iter_),
                "converged": int(model.n_iter_) < int(model.max_iter) and not caught,
                "loglik_per_obs": float(fa_loglik_per_obs(Xw, model.components_, model.noise_variance_)),
            }), flush=True)


# ---------------------------------------------------------------------------------------
# The driver.

def build(build_dir):
    os.makedirs(build_dir, exist_ok=True)
    cfg = subprocess.run(["cmake", "-S", ROOT, "-B", build_dir, "-DCMAKE_BUILD_TYPE=Release",
                          "-DFACTORWATCH_TESTS=OFF"], capture_output=True, text=True)
    if cfg.returncode != 0:
        sys.exit(f"configure failed:\n{cfg.stdout[-3000:]}{cfg.stderr[-3000:]}")
    # Another engineer edits the tree at the same time: a build broken in their files is
    # retried after a minute (up to three times).
    for attempt in range(1, 4):
        b = subprocess.run(["cmake", "--build", build_dir, "--target", "factorwatch", "storage_data", "-j2"],
                           capture_output=True, text=True)
        for line in (b.stdout + b.stderr).splitlines():
            if "warning" in line or "error" in line:
                print(line, file=sys.stderr)
        if b.returncode == 0:
            return
        log(f"build failed (attempt {attempt}); retrying in 60 s")
        time.sleep(60)
    sys.exit("build failed")


def machine_record(build_dir):
    def run(*cmd):
        try:
            return subprocess.run(cmd, capture_output=True, text=True).stdout.strip()
        except OSError:
            return ""
    cpu = next((l.split(":", 1)[1].strip() for l in run("lscpu").splitlines() if l.startswith("Model name")), "?")
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    git = lambda *a: run("git", "-C", ROOT, *a)
    dirty = git("status", "--porcelain", "--", "storage", "server", "engine")
    libsqlite = next((l.split("=>")[1].split("(")[0].strip() for l in
                      run("ldd", os.path.join(build_dir, "server", "factorwatch")).splitlines() if "libsqlite3" in l), "?")
    return {"bench": "machine", "cpu": cpu, "cpus": os.cpu_count(), "memory_gib": round(mem, 1),
            "compiler": (run("c++", "--version").splitlines() or ["?"])[0], "build_type": "Release",
            "commit": git("rev-parse", "--short", "HEAD"),
            "sources": "storage/server/engine modified since the commit" if dirty else "as committed",
            "sqlite3_shell": run("sqlite3", "--version").split(" ")[0], "our_libsqlite3": libsqlite,
            "date": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime())}


class Raw:
    def __init__(self, path):
        self.f = open(path, "w")
        self.records = []

    def add(self, record):
        record = {k: v for k, v in record.items() if k not in ("stdout", "stderr")}
        self.records.append(record)
        self.f.write(json.dumps(record) + "\n")
        self.f.flush()
        return record


def sqlite_script(path, table_sql, csv_path):
    with open(path, "w") as f:
        if table_sql:
            f.write(table_sql + "\n")
        f.write(".mode csv\nBEGIN;\n")
        f.write(f".import --skip 1 '{csv_path}' returns\n")
        f.write("COMMIT;\n")


def sqlite_count(db):
    r = subprocess.run(["sqlite3", db, "SELECT count(*) FROM returns"], capture_output=True, text=True)
    return int(r.stdout.strip() or -1)


PEER_TABLES = {
    "sqlite3 rowid": 'CREATE TABLE returns (date TEXT, asset TEXT, "return" REAL);',
    "sqlite3 pk": 'CREATE TABLE returns (date TEXT, asset TEXT, "return" REAL, PRIMARY KEY (date, asset)) WITHOUT ROWID;',
}


def snapshot(src, dst):
    """Copies a data directory or database file (untimed), to restore it before a repeat."""
    remove(dst)
    if os.path.isdir(src):
        shutil.copytree(src, dst)
    else:
        for suffix in ("", "-wal", "-shm", "-journal"):
            if os.path.exists(src + suffix):
                shutil.copy2(src + suffix, dst + suffix)


def restore(saved, target):
    for suffix in ("", "-wal", "-shm", "-journal"):
        remove(target + suffix)
    snapshot(saved, target)


def ingest_round(rnd, fw, tmp, full_csv, night_csv, raw):
    data = os.path.join(tmp, "ingest-ours")
    saved = os.path.join(tmp, "saved")

    def fresh(path):
        def setup():
            for suffix in ("", "-wal", "-shm", "-journal"):
                remove(path + suffix)
            warm_page_cache(full_csv)
        return setup

    def ours():
        steps = (("full", full_csv, fresh(data)), ("reload", full_csv, None),
                 ("nightly", night_csv, lambda: restore(saved, data)))
        for kind, path, setup in steps:
            if kind == "nightly":
                snapshot(data, saved)
            r = timed_process([fw, "--data", data, "load", path], f"ours {kind}", setup=setup)
            rec = {"bench": "ingest", "who": "ours", "kind": kind, "round": rnd, **r, **parse_load(r["stdout"])}
            rec["database_bytes"] = directory_bytes(data)
            raw.add(rec)
            log(f"round {rnd}: ours {kind}: {r['seconds']:.2f} s  {parse_load(r['stdout'])}")
        remove(data)
        remove(saved)

    def peers():
        for name, table_sql in PEER_TABLES.items():
            db = os.path.join(tmp, "peer.db")
            for kind, path, create in (("full", full_csv, table_sql), ("nightly", night_csv, None)):
                script = os.path.join(tmp, "import.sql")
                sqlite_script(script, create, path)
                if kind == "full":
                    setup = fresh(db)
                else:
                    snapshot(db, saved)
                    setup = lambda: restore(saved, db)  # noqa: E731
                r = timed_process(["sqlite3", "-bail", db], f"{name} {kind}", stdin_path=script, setup=setup)
                rec = {"bench": "ingest", "who": name, "kind": kind, "round": rnd, **r,
                       "rows_in_table": sqlite_count(db), "database_bytes": os.path.getsize(db)}
                if r["stderr"].strip():
                    rec["messages"] = r["stderr"].strip()[:500]
                raw.add(rec)
                log(f"round {rnd}: {name} {kind}: {r['seconds']:.2f} s, {rec['rows_in_table']} rows in the table")
            remove(db)
            remove(saved)

    for step in ((ours, peers) if rnd % 2 else (peers, ours)):
        step()


def refresh_setup(fw, tmp, csv_path, first_as_of, raw):
    base = os.path.join(tmp, "refresh-base")
    remove(base)
    r = subprocess.run([fw, "--data", base, "load", csv_path], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit(f"loading the refresh panel failed:\n{r.stderr}")
    m = subprocess.run([fw, "--data", base, "model", "set", "bench", "--method", "ml", "--factors", str(FACTORS),
                        "--window", str(WINDOW), "--first-as-of", first_as_of], capture_output=True, text=True)
    if m.returncode != 0:
        sys.exit(f"model set failed:\n{m.stderr}")
    raw.add({"bench": "refresh_setup", "load": parse_load(r.stdout), "first_as_of": first_as_of,
             "files": sorted(os.listdir(base))})
    return base


def refresh_round(rnd, fw, tmp, base, csv_path, sample, raw, windows_detail):
    run_dir = os.path.join(tmp, "refresh-run")

    def ours():
        def fresh_copy():  # the loaded database and its -wal / -shm, if any
            remove(run_dir)
            os.makedirs(run_dir)
            for name in os.listdir(base):
                shutil.copy2(os.path.join(base, name), run_dir)

        r = timed_process([fw, "--data", run_dir, "refresh", "bench", "--quiet"], "ours refresh", setup=fresh_copy)
        rec = raw.add({"bench": "refresh", "who": "ours", "round": rnd, **r, **parse_refresh(r["stdout"])})
        log(f"round {rnd}: ours refresh: {r['seconds']:.2f} s  {parse_refresh(r['stdout'])}")
        if rec.get("fitted") != REFRESH_WINDOWS:
            log(f"warning: expected {REFRESH_WINDOWS} windows fitted, the summary says {rec.get('fitted')}")
        w = subprocess.run([fw, "--data", run_dir, "windows", "bench"], capture_output=True, text=True)
        windows_detail.setdefault(rnd, parse_windows(w.stdout))
        remove(run_dir)

    def peers():
        for config, env in (("as-is", None),
                            ("unset", {k: v for k, v in os.environ.items()
                                       if k not in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")})):
            cmd = [sys.executable, os.path.abspath(__file__), "fa-peer", "--csv", csv_path, "--config", config,
                   "--sample", str(sample)]
            r = timed_process(cmd, f"fa peer {config}", env=env)
            for line in r["stdout"].splitlines():
                if line.startswith("{"):
                    rec = json.loads(line)
                    rec.update(round=rnd, process_seconds=r["seconds"], others_cpu_share=r["others_cpu_share"],
                               steal_share=r["steal_share"], tries=r["tries"], contended=r["contended"])
                    raw.add(rec)
            fits = [json.loads(l) for l in r["stdout"].splitlines() if l.startswith('{"bench": "fa_peer"')]
            for method in ("lapack", "randomized"):
                s = [f["seconds"] for f in fits if f["method"] == method]
                if s:
                    log(f"round {rnd}: FA {method} ({config}): {statistics.mean(s):.3f} s a window, "
                        f"x{REFRESH_WINDOWS} = {statistics.mean(s) * REFRESH_WINDOWS:.1f} s (extrapolated)")

    for step in ((ours, peers) if rnd % 2 else (peers, ours)):
        step()


# ---------------------------------------------------------------------------------------
# The report.

def fmt_s(x):
    return "-" if x is None else (f"{x:.3f} s" if x < 1 else f"{x:.2f} s")


def spread(v):
    return f"{min(v):.2f}-{max(v):.2f}" if len(v) > 1 else f"{v[0]:.2f}"


def report(records):
    L = []
    say = L.append
    m = next((r for r in records if r.get("bench") == "machine"), {})
    say(f"Machine: {m.get('cpu')}, {m.get('cpus')} CPUs, {m.get('memory_gib')} GiB; {m.get('compiler')}; {m.get('date')}")
    say(f"Source: commit {m.get('commit')}, {m.get('sources')}; Release build")
    say(f"SQLite: ours links {m.get('our_libsqlite3')}; peer: sqlite3 shell {m.get('sqlite3_shell')}")
    timed = [r for r in records if "others_cpu_share" in r]
    if timed:
        say(f"Load during timed runs: others at most {max(r['others_cpu_share'] for r in timed):.1%} of the CPUs, "
            f"steal at most {max(r['steal_share'] for r in timed):.1%}; "
            f"{sum(1 for r in timed if r.get('contended'))} run(s) kept although disturbed")
    say("")
    verdicts = []

    ing = [r for r in records if r.get("bench") == "ingest"]
    if ing:
        say("INGEST: 5,000 assets x 2,520 dates = 12.6 million rows, long CSV, file in the page cache;")
        say("wall time of the whole process, median over rounds [range]; ratio = peer / ours")

        def med(who, kind, key="seconds"):
            v = [r[key] for r in ing if r["who"] == who and r["kind"] == kind and r.get(key) is not None]
            return (statistics.median(v), v) if v else (None, [])

        ours_full, ours_full_v = med("ours", "full")
        for kind, label in (("full", "full load, fresh database"), ("reload", "same file again (no change)"),
                            ("nightly", "one new date, 5,000 rows")):
            o, ov = med("ours", kind)
            if o is None:
                continue
            say(f"  ours    {label:30s} {fmt_s(o):>9s} [{spread(ov)}]  peak RSS "
                f"{max(r['peak_rss_bytes'] for r in ing if r['who'] == 'ours' and r['kind'] == kind) / 2**20:.0f} MiB")
            split = [r for r in ing if r["who"] == "ours" and r["kind"] == kind and "read_seconds" in r]
            if split:
                rd = statistics.median(r["read_seconds"] for r in split)
                st = statistics.median(r["store_seconds"] for r in split)
                rest = statistics.median(r["seconds"] - r["summary_seconds"] for r in split)
                say(f"          reading + validating {rd:.2f} s, storing {st:.2f} s, "
                    f"rest of the process (open, commit/checkpoint, exit) {rest:.2f} s; outcome {split[0].get('outcome')}")
            for peer in PEER_TABLES:
                p, pv = med(peer, kind)
                if p is not None:
                    say(f"  {peer:14s}{label:24s} {fmt_s(p):>9s} [{spread(pv)}]  ratio peer/ours {p / o:.2f}")
        sizes = {r["who"]: r["database_bytes"] for r in ing if r["kind"] == "full"}
        say("  database size after the full load: " + ", ".join(f"{k} {v / 2**20:.0f} MiB" for k, v in sizes.items()))
        rows = {r["who"]: r.get("rows_in_table") for r in ing if r["kind"] == "nightly" and "rows_in_table" in r}
        if rows:
            say("  rows in the peers' tables after the nightly file: " + ", ".join(f"{k} {v:,}" for k, v in rows.items()))
        if ours_full is not None:
            fastest = min((med(p, "full")[0], p) for p in PEER_TABLES if med(p, "full")[0] is not None)
            verdicts.append((ours_full < INGEST_TARGET_S,
                             f"ingest 12.6M rows under {INGEST_TARGET_S:.0f} s: ours {ours_full:.2f} s "
                             f"[{spread(ours_full_v)}], {fastest[1]} {fastest[0]:.2f} s, ratio {fastest[0] / ours_full:.2f}"))
        say("")

    ref = [r for r in records if r.get("bench") == "refresh" and r.get("who") == "ours"]
    fa = [r for r in records if r.get("bench") == "fa_peer"]
    if ref:
        say(f"REFRESH: backfill of {REFRESH_WINDOWS} windows of {WINDOW} dates, {REFRESH_ASSETS:,} assets, "
            f"{FACTORS} factors, ML; median over rounds [range]")
        v = [r["seconds"] for r in ref]
        ours = statistics.median(v)
        say(f"  ours    factorwatch refresh (whole process)  {fmt_s(ours):>9s} [{spread(v)}]  "
            f"{REFRESH_WINDOWS / ours:.1f} windows/s, peak RSS {max(r['peak_rss_bytes'] for r in ref) / 2**20:.0f} MiB")
        split = [r for r in ref if "fit_seconds" in r]
        if split:
            parts = {k: statistics.median(r[k] for r in split) for k in ("read_seconds", "fit_seconds", "write_seconds",
                                                                            "summary_seconds")}
            rest = statistics.median(r["seconds"] - r["summary_seconds"] for r in split)
            say(f"          reading {parts['read_seconds']:.2f} s, fitting {parts['fit_seconds']:.2f} s, writing "
                f"{parts['write_seconds']:.2f} s (summary total {parts['summary_seconds']:.2f} s); rest of the process "
                f"{rest:.2f} s")
            aligned = [r for r in split if "align_seconds" in r]
            align_s = statistics.median(r["align_seconds"] for r in aligned) if aligned else 0.0
            if aligned:
                say(f"          alignment and drift (second pass, {aligned[0]['aligned']} windows): {align_s:.2f} s, "
                    f"{align_s / max(aligned[0]['aligned'], 1) * 1e3:.1f} ms a window")
            other = statistics.median(r["summary_seconds"] - r["read_seconds"] - r["fit_seconds"] - r["write_seconds"]
                                      - r.get("align_seconds", 0.0) for r in split)
            say(f"          inside the summary's total but none of the four: {other:.2f} s (the per-window input "
                f"fingerprint, {other / REFRESH_WINDOWS * 1e3:.1f} ms a window, is most of it)")
            say(f"          per window: fitting {parts['fit_seconds'] / REFRESH_WINDOWS * 1e3:.1f} ms, reading "
                f"{parts['read_seconds'] / REFRESH_WINDOWS * 1e3:.1f} ms, writing "
                f"{parts['write_seconds'] / REFRESH_WINDOWS * 1e3:.1f} ms")
        wd = next((r for r in records if r.get("bench") == "windows_detail"), None)
        if wd and wd["windows"]:
            it = [w["iterations"] for w in wd["windows"].values()]
            fm = [w["fit_ms"] for w in wd["windows"].values()]
            say(f"          EM passes per window (round 1): first {it[0]} (cold start), then median "
                f"{statistics.median(it[1:]) if len(it) > 1 else '-'} [{min(it)}-{max(it)}]; stored fit ms median "
                f"{statistics.median(fm):.1f} [{min(fm):.1f}-{max(fm):.1f}]")
        best = None
        for method in ("lapack", "randomized"):
            per_config = {}
            for config in sorted({r["config"] for r in fa}):
                rounds = sorted({r["round"] for r in fa if r["config"] == config and r["method"] == method})
                totals = [statistics.mean(r["seconds"] for r in fa if r["config"] == config and r["method"] == method
                                          and r["round"] == rnd) * REFRESH_WINDOWS for rnd in rounds]
                if totals:
                    per_config[config] = (statistics.median(totals), totals)
            if not per_config:
                continue
            config, (total, totals) = min(per_config.items(), key=lambda kv: kv[1][0])
            sample = [r for r in fa if r["config"] == config and r["method"] == method]
            iters = [r["n_iter"] for r in sample]
            say(f"  FA {method:10s} ({config}) EXTRAPOLATED x{REFRESH_WINDOWS} from {len({r['window'] for r in sample})} "
                f"windows: {fmt_s(total):>9s} [{spread(totals)}]  ratio peer/ours {total / ours:.2f}; "
                f"{total / REFRESH_WINDOWS * 1e3:.0f} ms a window, n_iter {min(iters)}-{max(iters)}"
                + ("" if all(r["converged"] for r in sample) else ", some hit max_iter"))
            other = [f"{c} {t:.1f} s" for c, (t, _) in per_config.items() if c != config]
            if other:
                say(f"          other BLAS configuration: {', '.join(other)}")
            if wd and wd["windows"]:
                diffs = [r["loglik_per_obs"] - wd["windows"][r["as_of"]]["loglik_per_obs"] for r in sample
                         if r["as_of"] in wd["windows"]]
                if diffs:
                    say(f"          log-likelihood per observation minus ours on the same windows: "
                        f"{min(diffs):+.2e} .. {max(diffs):+.2e}")
            if method == "lapack":
                best = (total, config)
        setups = [r for r in records if r.get("bench") == "fa_peer_setup"]
        if setups:
            s = setups[0]
            say(f"  FA settings: n_components={FACTORS}, tol={s['tol']:.4g} (= 1e-8 x |total log-likelihood| of a pilot "
                f"fit, our relative rule), max_iter=1000, fresh start per window; reading the CSV "
                f"({statistics.median(r['csv_read_seconds'] for r in setups):.1f} s) excluded; sklearn {s['sklearn']}")
            for c in sorted({r["config"] for r in setups}):
                say(f"  BLAS {c}: {next(r['blas'] for r in setups if r['config'] == c)}")
        v_ok = ours < REFRESH_TARGET_S
        peer_txt = f", FA lapack (extrapolated, {best[1]}) {best[0]:.1f} s, ratio {best[0] / ours:.2f}" if best else ""
        verdicts.append((v_ok, f"refresh backfill of {REFRESH_WINDOWS} windows under {REFRESH_TARGET_S:.0f} s: ours "
                               f"{ours:.2f} s [{spread(v)}]{peer_txt}"))
        say("")

    if verdicts:
        say("TARGETS")
        for ok, text in verdicts:
            say(f"  {'MET   ' if ok else 'MISSED'} {text}")
    return "\n".join(L)


def main():
    if len(sys.argv) > 1 and sys.argv[1] == "fa-peer":
        ap = argparse.ArgumentParser()
        ap.add_argument("mode")
        ap.add_argument("--csv", required=True)
        ap.add_argument("--config", required=True)
        ap.add_argument("--sample", type=int, default=10)
        ap.add_argument("--window", type=int, default=WINDOW)
        ap.add_argument("--factors", type=int, default=FACTORS)
        fa_peer(ap.parse_args())
        return
    if len(sys.argv) > 1 and sys.argv[1] == "report":
        with open(sys.argv[2]) as f:
            print(report([json.loads(l) for l in f if l.startswith("{")]))
        return

    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--build", default=os.path.join(ROOT, "build-storagebench"))
    ap.add_argument("--no-build", action="store_true", help="use the binaries already in --build")
    ap.add_argument("--out", help="results directory (default BUILD/results)")
    ap.add_argument("--only", choices=["ingest", "refresh"])
    ap.add_argument("--sample", type=int, default=10, help="windows the scikit-learn peer fits per round")
    ap.add_argument("--keep-data", action="store_true")
    a = ap.parse_args()

    out = a.out or os.path.join(a.build, "results")
    os.makedirs(out, exist_ok=True)
    if not a.no_build:
        log(f"building factorwatch and storage_data in {a.build}")
        build(a.build)
    fw = os.path.join(a.build, "server", "factorwatch")
    gen = os.path.join(a.build, "bench", "storage_data")
    for exe in (fw, gen):
        if not os.access(exe, os.X_OK):
            sys.exit(f"missing {exe}")
    if not shutil.which("sqlite3"):
        sys.exit("the sqlite3 shell is missing: apt-get install sqlite3")

    raw = Raw(os.path.join(out, "storage_raw.jsonl"))
    raw.add(machine_record(a.build))
    tmp = tempfile.mkdtemp(prefix="factorwatch-storagebench.", dir="/tmp")
    try:
        if a.only in (None, "ingest"):
            full, night = os.path.join(tmp, "ingest.csv"), os.path.join(tmp, "night.csv")
            for args in (["--assets", str(INGEST_ASSETS), "--dates", str(INGEST_DATES), "--out", full],
                         ["--assets", str(INGEST_ASSETS), "--dates", "1", "--first", str(INGEST_DATES), "--out", night]):
                raw.add(json.loads(subprocess.run([gen, *args], capture_output=True, text=True, check=True).stdout))
            for rnd in range(1, a.rounds + 1):
                ingest_round(rnd, fw, tmp, full, night, raw)
            remove(full)
        if a.only in (None, "refresh"):
            csv_path = os.path.join(tmp, "refresh.csv")
            gen_rec = json.loads(subprocess.run(
                [gen, "--assets", str(REFRESH_ASSETS), "--dates", str(REFRESH_DATES), "--decimals", "10",
                 "--out", csv_path], capture_output=True, text=True, check=True).stdout)
            raw.add(gen_rec)
            # The date of index 503: the first as-of date, so that windows 0..249 are fitted.
            first_as_of = None
            with open(csv_path) as f:
                next(f)
                seen = []
                for line in f:
                    d = line.split(",", 1)[0]
                    if not seen or seen[-1] != d:
                        seen.append(d)
                        if len(seen) == WINDOW:
                            first_as_of = d
                            break
            base = refresh_setup(fw, tmp, csv_path, first_as_of, raw)
            windows_detail = {}
            for rnd in range(1, a.rounds + 1):
                refresh_round(rnd, fw, tmp, base, csv_path, a.sample, raw, windows_detail)
            if windows_detail:
                raw.add({"bench": "windows_detail", "round": min(windows_detail),
                         "windows": windows_detail[min(windows_detail)]})
    finally:
        if a.keep_data:
            log(f"data kept in {tmp}")
        else:
            shutil.rmtree(tmp, ignore_errors=True)

    text = report(raw.records)
    with open(os.path.join(out, "storage_bench.txt"), "w") as f:
        f.write(text + "\n")
    print(text)
    log(f"raw lines: {raw.f.name}; report: {os.path.join(out, 'storage_bench.txt')}")


if __name__ == "__main__":
    main()
