#!/usr/bin/python3
"""Soak test of `factorwatch serve`: many loopback clients for minutes, mixing reads with
uploads, portfolio writes and refresh jobs, plus a share of hostile requests; reports
throughput, latency, errors and the daemon's memory, and says PASS or FAIL.

    nice -n 10 /usr/bin/python3 bench/soak.py [--clients 16] [--seconds 600]
        [--binary build/server/factorwatch] [--generator PATH] [--cache-mb 32]
        [--memory-bound-mb M] [--json-out FILE] [--keep] [--seed 1]

Standard library only. Everything happens in a new temporary directory (never the
user's data directory), on 127.0.0.1 only, and is removed at the end (--keep keeps it).

Set-up (well under a minute): the project's generator writes the fictional demo universe
(build/demo-universe/factorwatch-demo-universe, seed 7: 640 assets, 2020-2025), the
binary loads it and defines model `demo` as deploy/quickstart.sh does (ml, 4 factors,
window 504, step 1) but from 2025-11-01 only (43 windows instead of about 670), refreshes
it and stores the demo book and its benchmark. Then `factorwatch serve --port 0
--cache-mb M` starts on that directory; the script reads the address it prints and the
token from `factorwatch token`.

Load: --clients threads, each a closed loop (the next request as soon as the answer is
in) over a weighted mix of request kinds (KINDS below): reads of every surface (routes
list, health, models, windows, exposures JSON and CSV, specific risk, risk of the demo
book by GET and of posted weights, drift, history, alerts, factor returns, residuals,
portfolios, jobs); writes with the token (holdings stored as JSON or CSV, returns
uploads of new dates, of corrections to recent dates and of unchanged dates, refresh
jobs, which are then polled until they end); and hostile requests that must get a
given 4xx (unknown route, unknown model, bad parameter, wrong method, missing or wrong
token, malformed JSON, rejected CSV). Each client keeps its connection alive and opens
a new one now and then, so both paths are exercised.

Before the load, a connection burst: --burst (64, the daemon's default worker threads)
clients open a new connection at the same moment and send a POST with a body, three
times; every one must be answered (200, or a clear 429/503 from a cap on connections;
the statuses column shows which), none reset or dropped.

Every answer must have its expected status (a set per kind) and a body of the expected
kind; anything else (another status, a 5xx, a refused or dropped connection, a
timeout, a refresh job that fails) is an error and is listed with its route and
message. A GET that fails on a reused keep-alive connection before any answer arrived
is retried once on a new connection (what HTTP clients do, RFC 9110 9.2.2); those
retries are counted and shown, not hidden.

After the load: the script waits for the refresh jobs to end, starts one last refresh
and checks that the model is then fully current (no stale window, one window per date
from the first as-of on), stops the daemon with SIGTERM (it must exit 0 within 60 s)
and runs SQLite's integrity check on the database.

Memory: VmRSS and VmHWM of the daemon (/proc/PID/status), with its thread and open
descriptor counts, at the start (daemon ready, no request yet), every 10 s, at the end
of the load and after the jobs settled. Two limits: the resident size at the end must
be within a bound built from the daemon's configuration (start + --cache-mb + SQLite's
page cache per connection + refresh working set + what the allocator's arenas may keep;
memory_bound below gives each part and its reason), and, in runs of 300 s or more, it
may grow by at most 32 MiB over the last half of the load (caches fill in the first
minutes; a leak keeps growing).

PASS when there is no error, the daemon stopped cleanly, the database is intact and the
memory is within both limits; exit status 0 on PASS, 1 on FAIL, 2 when the set-up itself
failed. The run takes --seconds plus about a minute.
"""
import argparse
import http.client
import json
import os
import queue
import random
import shutil
import signal
import socket
import sqlite3
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from datetime import date, timedelta

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)

FIRST_AS_OF = "2025-11-01"        # 43 windows to 2025-12-31: set-up in seconds
HOLDINGS_AS_OF = "2025-12-31"     # the demo portfolios' date (deploy/quickstart.sh)
MODEL_ARGS = ["--method", "ml", "--factors", "4", "--window", "504", "--step", "1", "--first-as-of", FIRST_AS_OF]
SAMPLE_SECONDS = 10
MAX_ERRORS_KEPT = 200             # errors kept with their details; all are counted
SETTLE_SECONDS = 600              # longest wait for the refresh jobs after the load
STOP_SECONDS = 60                 # longest wait for the daemon to exit after SIGTERM
CORRECTION_DATES = 20             # corrections touch the last 20 stored dates: every window
# The parts of the memory bound (memory_bound below gives the reason for each).
SQLITE_PAGE_CACHE_MB = 2          # SQLite's default cache_size (-2000 KiB) per connection
REFRESH_ALLOWANCE_MB = 64         # refresh thread: dense returns block + fit workspaces
ARENA_ALLOWANCE_MB = 16           # freed memory glibc may keep in each malloc arena
STACKS_MB = 16                    # thread stacks touched: ~70 threads x up to 256 KiB
# A leak shows as growth once the caches are full: over the last half of a run of at
# least LEAK_CHECK_SECONDS, the resident size may grow by at most this much. At ~200
# requests/s, 300 s of load are 60,000 requests: 32 MiB is about 0.5 KiB per request.
GROWTH_ALLOWANCE_MB = 32
LEAK_CHECK_SECONDS = 300


def log(msg):
    print(f"[soak] {msg}", file=sys.stderr, flush=True)


class SetupError(Exception):
    pass


# ---------------------------------------------------------------------------------------
# Set-up: the demo universe in a temporary data directory, and the daemon on it.

def run_step(cmd, what, timeout=300):
    t0 = time.monotonic()
    p = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout)
    if p.returncode != 0:
        raise SetupError(f"{what} failed (exit {p.returncode}): {' '.join(cmd)}\n{p.stdout[-2000:]}{p.stderr[-2000:]}")
    log(f"{what}: {time.monotonic() - t0:.1f} s")
    return p.stdout


class Universe:
    """What the clients need to know about the generated data: dates, assets, values."""

    def __init__(self, out_dir):
        with open(os.path.join(out_dir, "returns_wide.csv")) as f:
            lines = f.read().splitlines()
        header = lines[0].split(",")
        self.assets = header[1:]
        self.rows = {}                 # date -> list of cells (strings, "" for a gap)
        self.dates = []
        for line in lines[1:]:
            cells = line.split(",")
            self.dates.append(cells[0])
            self.rows[cells[0]] = cells[1:]
        last = self.rows[self.dates[-1]]
        self.listed = [a for a, v in zip(self.assets, last) if v != ""]  # listed at the end
        self.as_of_dates = [d for d in self.dates if d >= FIRST_AS_OF]   # one window each
        self.recent = self.dates[-CORRECTION_DATES:]
        self.source_dates = self.dates[-250:]   # new dates resample these cross-sections
        self.window_assets = list(self.listed)  # replaced by the latest window's assets


def prepare(binary, generator, tmp):
    out = os.path.join(tmp, "universe")
    data = os.path.join(tmp, "data")
    os.makedirs(data)
    fw = [binary, "--data", data]
    run_step([generator, "--out", out, "--seed", "7"], "generate the demo universe")
    run_step(fw + ["load", os.path.join(out, "returns_long.csv")], "load it")
    run_step(fw + ["model", "set", "demo"] + MODEL_ARGS, "define model demo")
    run_step(fw + ["refresh", "demo"], "refresh demo")
    run_step(fw + ["portfolio", "set", "demo-benchmark", os.path.join(out, "portfolio_benchmark.csv"),
                   "--as-of", HOLDINGS_AS_OF], "store demo-benchmark")
    run_step(fw + ["portfolio", "set", "demo-book", os.path.join(out, "portfolio_book.json")], "store demo-book")
    return data, Universe(out)


def daemon_threads(binary):
    """The daemon's worker threads (its --threads default, from `serve --help`)."""
    p = subprocess.run([binary, "serve", "--help"], capture_output=True, text=True)
    for line in p.stdout.splitlines():
        if line.strip().startswith("--threads"):
            digits = line.split("[", 1)[-1].split("]", 1)[0]
            if digits.isdigit():
                return int(digits)
    return 64


class Daemon:
    def __init__(self, binary, data, tmp, cache_mb, extra):
        self.log_path = os.path.join(tmp, "daemon.log")
        self.db_path = os.path.join(data, "factorwatch.db")
        cmd = [binary, "--data", data, "serve", "--port", "0", "--cache-mb", str(cache_mb)] + extra
        self.stderr = open(self.log_path, "wb")
        # Own session: a Ctrl-C on the terminal reaches the script, which stops the daemon.
        self.proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=self.stderr, text=True,
                                     start_new_session=True)
        self.pid = self.proc.pid
        self.lines = queue.Queue()
        threading.Thread(target=self._drain, daemon=True).start()
        self.host, self.port = self._wait_ready(60)

    def _drain(self):
        for line in self.proc.stdout:
            self.lines.put(line.rstrip("\n"))
        self.lines.put(None)

    def _wait_ready(self, limit):
        deadline = time.monotonic() + limit
        while time.monotonic() < deadline:
            try:
                line = self.lines.get(timeout=1)
            except queue.Empty:
                continue
            if line is None:
                raise SetupError(f"the daemon exited before it was ready (exit {self.proc.wait()}); "
                                 f"its log:\n{self.log_tail(20)}")
            if line.startswith("ready:"):
                url = line.split()[1]                        # http://127.0.0.1:PORT
                host, port = url.split("//", 1)[1].rsplit(":", 1)
                if host != "127.0.0.1":
                    raise SetupError(f"the daemon listens on {host}, not on loopback 127.0.0.1")
                return host, int(port)
        raise SetupError(f"the daemon printed no 'ready:' line within {limit} s; its log:\n{self.log_tail(20)}")

    def log_tail(self, n):
        self.stderr.flush()
        try:
            with open(self.log_path, errors="replace") as f:
                return "".join(f.readlines()[-n:])
        except OSError:
            return ""

    def server_errors_logged(self):
        """Request-log lines with a 5xx status (time, method, path, status, "12.3 ms") and the
        lines of exceptions that escaped a handler ("... error in GET /path: ...")."""
        self.stderr.flush()
        found = []
        with open(self.log_path, errors="replace") as f:
            for line in f:
                parts = line.split()
                status = parts[-3] if len(parts) >= 5 and parts[-1] == "ms" else ""
                if (status.isdigit() and status.startswith("5")) or " error in " in line:
                    found.append(line.rstrip())
        return found

    def memory(self):
        """VmRSS and VmHWM in MiB, threads and open descriptors; None once it has exited."""
        try:
            fields = {}
            with open(f"/proc/{self.pid}/status") as f:
                for line in f:
                    key, _, value = line.partition(":")
                    fields[key] = value.split()
            fds = len(os.listdir(f"/proc/{self.pid}/fd"))
            mb = lambda key: int(fields[key][0]) / 1024 if key in fields else float("nan")  # noqa: E731
            return {"rss_mb": mb("VmRSS"), "hwm_mb": mb("VmHWM"), "anon_mb": mb("RssAnon"),
                    "file_mb": mb("RssFile"), "threads": int(fields["Threads"][0]), "fds": fds}
        except (OSError, KeyError, IndexError, ValueError):
            return None

    def cpu_seconds(self):
        try:
            with open(f"/proc/{self.pid}/stat") as f:
                fields = f.read().rsplit(")", 1)[1].split()
            return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")  # utime + stime
        except (OSError, IndexError, ValueError):
            return None

    def request_cpu_seconds(self):
        """CPU of the threads at the process's own priority: the request workers, the
        listener and the main thread. The refresh thread and its fitting threads run at nice
        +10 (docs/api.md, "Refreshes") and are left out, so that CPU per request is not
        blurred by whatever the background refresh managed to get."""
        hz = os.sysconf("SC_CLK_TCK")
        try:
            with open(f"/proc/{self.pid}/stat") as f:
                base_nice = int(f.read().rsplit(")", 1)[1].split()[16])
            total = 0
            for tid in os.listdir(f"/proc/{self.pid}/task"):
                try:
                    with open(f"/proc/{self.pid}/task/{tid}/stat") as f:
                        fields = f.read().rsplit(")", 1)[1].split()
                except OSError:
                    continue
                if int(fields[16]) == base_nice:
                    total += int(fields[11]) + int(fields[12])
            return total / hz
        except (OSError, IndexError, ValueError):
            return None

    def stop(self):
        """SIGTERM, then wait; (exit code, seconds), or (None, seconds) if it had to be killed."""
        if self.proc.poll() is not None:
            return self.proc.returncode, 0.0
        t0 = time.monotonic()
        self.proc.send_signal(signal.SIGTERM)
        try:
            code = self.proc.wait(timeout=STOP_SECONDS)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()
            code = None
        self.stderr.close()
        return code, time.monotonic() - t0


# ---------------------------------------------------------------------------------------
# One request, what it must get, and the client loop.

class Req:
    __slots__ = ("method", "path", "body", "headers", "expect", "check", "after")

    def __init__(self, method, path, expect=(200,), body=None, headers=None, check=None, after=None):
        self.method, self.path, self.expect = method, path, frozenset(expect)
        self.body = body
        self.headers = dict(headers or {})
        self.check = check    # body -> error message or None
        self.after = after    # (status, body) -> error message or None; runs after a good answer


def is_json_object(body):
    return None if body[:1] == b"{" else f"body is not a JSON object: {body[:80]!r}"


def has_caution(body):
    return None if body.startswith(b"# caution:") else f"CSV without the caution line: {body[:80]!r}"


def non_empty(body):
    return None if body else "empty body"


def not_aligned_yet(status, body):
    if status == 404 and b"not aligned yet" not in body:
        return f"404 for another reason than a window not aligned yet: {body[:200]!r}"
    return None


class Shared:
    """State the clients share: the token, the universe, the new dates, the refresh jobs."""

    def __init__(self, universe, token, max_new_dates):
        self.u = universe
        self.token = token
        self.lock = threading.Lock()
        self.max_new_dates = max_new_dates
        self.new_dates = []            # dates uploaded (or being uploaded) after the last one
        self.new_bodies = {}           # date -> its CSV, to send again unchanged
        self.pending_jobs = set()      # refresh jobs started and not yet seen to end
        self.jobs_seen = set()
        self.jobs_finished = set()
        self.job_errors = []
        self.uploads_ok = {}           # outcome -> count

    def auth(self, extra=None):
        h = {"Authorization": f"Bearer {self.token}"}
        h.update(extra or {})
        return h

    def next_new_date(self):
        with self.lock:
            if len(self.new_dates) >= self.max_new_dates:
                return None
            last = date.fromisoformat(self.new_dates[-1] if self.new_dates else self.u.dates[-1])
            d = last + timedelta(days=1)
            while d.weekday() >= 5:    # Monday to Friday, as the generator's calendar
                d += timedelta(days=1)
            self.new_dates.append(d.isoformat())
            return d.isoformat()


def long_csv(day, assets, values):
    lines = ["date,asset,return"]
    lines += [f"{day},{a},{v}" for a, v in zip(assets, values) if v != ""]
    return ("\n".join(lines) + "\n").encode()


def weights_of(rng, assets, n):
    picked = rng.sample(assets, n)
    return {a: round(rng.uniform(-0.02, 0.06), 6) for a in picked}


def plan(kind, rng, s):
    """The request for one kind; see KINDS for the mix."""
    u = s.u
    as_of = rng.choice(u.as_of_dates)
    fmt = rng.choice(("json", "csv"))
    check = is_json_object if fmt == "json" else has_caution
    if kind == "index":
        return Req("GET", "/v1", check=is_json_object)
    if kind == "health":
        return Req("GET", rng.choice(("/v1/health", "/v1/version")), check=is_json_object)
    if kind == "models":
        path = rng.choice(("/v1/models?format=" + fmt, "/v1/models/demo", "/v1/assets?format=" + fmt))
        return Req("GET", path, check=non_empty)
    if kind == "windows":
        return Req("GET", f"/v1/models/demo/windows?format={fmt}", check=check)
    if kind == "exposures-json":
        return Req("GET", f"/v1/models/demo/exposures?as_of={as_of}", check=is_json_object)
    if kind == "exposures-csv":
        return Req("GET", f"/v1/models/demo/exposures?as_of={as_of}&format=csv", check=has_caution)
    if kind == "exposures-assets":
        assets = ",".join(rng.sample(u.listed, rng.randint(1, 20)))
        return Req("GET", f"/v1/models/demo/exposures?assets={assets}&format={fmt}", check=check)
    if kind == "specific-risk":
        return Req("GET", f"/v1/models/demo/specific-risk?as_of={as_of}&format={fmt}", check=check)
    if kind == "risk-book":
        by_asset = rng.choice(("true", "false"))
        return Req("GET", f"/v1/models/demo/risk?portfolio=demo-book&as_of={as_of}&by_asset={by_asset}&format={fmt}",
                   check=check)
    if kind in ("risk-post", "burst"):
        body = {"weights": weights_of(rng, u.listed, rng.randint(5, 40)), "benchmark": "demo-benchmark"}
        # In a burst, a daemon with a cap on connections may refuse some with a clear 429 or
        # 503 (an answer, not an error); a reset or a dropped connection is an error.
        expect, check = ((200, 429, 503), non_empty) if kind == "burst" else ((200,), is_json_object)
        return Req("POST", "/v1/models/demo/risk?by_asset=false", expect, json.dumps(body).encode(),
                   {"Content-Type": "application/json"}, check)
    if kind == "drift":
        if rng.random() < 0.5:
            return Req("GET", f"/v1/models/demo/drift?from={as_of}&format={fmt}", check=check)
        # The first window has no comparison. A window being refitted has none either until
        # the refresh's second pass aligns it again: 404 saying so is the right answer then.
        later = rng.choice(u.as_of_dates[1:])
        return Req("GET", f"/v1/models/demo/drift?window={later}&against={rng.choice(('previous', 'pinned'))}"
                          f"&format={fmt}", (200, 404), check=non_empty, after=not_aligned_yet)
    if kind == "history":
        return Req("GET", f"/v1/models/demo/history?asset={rng.choice(u.listed)}&from={as_of}&format={fmt}",
                   check=check)
    if kind == "alerts":
        return Req("GET", f"/v1/models/demo/alerts?format={fmt}", check=check)
    if kind == "factor-returns":
        method = rng.choice(("bartlett", "regression"))
        which = f"from={as_of}" if rng.random() < 0.7 else f"window={as_of}"
        return Req("GET", f"/v1/models/demo/factor-returns?{which}&method={method}&format={fmt}", check=check)
    if kind == "residuals":
        return Req("GET", f"/v1/models/demo/residuals?asset={rng.choice(u.window_assets)}&format={fmt}",
                   check=check)
    if kind == "portfolios":
        path = rng.choice((f"/v1/portfolios?format={fmt}", "/v1/portfolios/demo-book",
                           "/v1/portfolios/demo-benchmark?format=csv"))
        return Req("GET", path, check=non_empty)
    if kind == "job-poll":
        with s.lock:
            job = rng.choice(sorted(s.pending_jobs)) if s.pending_jobs else None
        if job is None:
            return Req("GET", "/v1/jobs", check=is_json_object)
        return Req("GET", f"/v1/jobs/{job}", check=is_json_object, after=lambda st, b: job_seen(s, b))
    if kind == "portfolio-put":
        name = f"soak-book-{rng.randint(1, 4)}"
        holdings = weights_of(rng, u.listed, rng.randint(5, 40))
        day = rng.choice(u.recent)
        if rng.random() < 0.5:
            body = json.dumps({"as_of": day, "benchmark": "demo-benchmark", "weights": holdings}).encode()
            return Req("PUT", f"/v1/portfolios/{name}", (200, 201), body, s.auth({"Content-Type": "application/json"}),
                       is_json_object)
        csv = "asset,weight\n" + "".join(f"{a},{w}\n" for a, w in holdings.items())
        return Req("PUT", f"/v1/portfolios/{name}?as_of={day}", (200, 201), csv.encode(),
                   s.auth({"Content-Type": "text/csv"}), is_json_object)
    if kind == "upload-new":
        day = s.next_new_date()
        if day is None:                 # the cap on new dates is reached: send one again
            kind = "upload-same"
        else:
            src = u.rows[rng.choice(u.source_dates)]   # a past day's cross-section, resampled
            values = [v if v == "" else repr(float(v) * (1 + rng.gauss(0, 0.05))) for v in src]
            body = long_csv(day, u.assets, values)
            with s.lock:
                s.new_bodies[day] = body
            return upload(s, f"soak-new-{day}.csv", body)
    if kind == "upload-same":
        with s.lock:
            sent = list(s.new_bodies.items())
        if sent and rng.random() < 0.5:
            day, body = rng.choice(sent)
        else:
            day = rng.choice(u.recent)
            body = long_csv(day, u.assets, u.rows[day])
        return upload(s, f"soak-same-{day}.csv", body)
    if kind == "upload-correction":
        day = rng.choice(u.recent)
        values = [v if v == "" else repr(float(v) * (1 + rng.gauss(0, 1e-3))) for v in u.rows[day]]
        return upload(s, f"soak-correction-{day}.csv", long_csv(day, u.assets, values))
    if kind == "refresh":
        return Req("POST", "/v1/models/demo/refresh", (202,), b"", s.auth(), is_json_object,
                   after=lambda st, b: job_started(s, b))
    # Hostile requests: each must get exactly its 4xx, and change nothing.
    if kind == "bad-route":
        return Req("GET", rng.choice(("/v1/no-such-route", "/v2/models", "/v1/models/demo/no-such-part",
                                      "/v1/jobs/999999999")), (404,), check=non_empty)
    if kind == "bad-model":
        return Req("GET", f"/v1/models/soak-no-such-model/exposures?format={fmt}", (404,), check=non_empty)
    if kind == "bad-param":
        path = rng.choice(("/v1/models/demo/exposures?format=xml", "/v1/models/demo/exposures?as_of=2025-13-01",
                           "/v1/models/demo/drift?from=2025-12-31&to=2025-01-01",
                           "/v1/models/demo/factor-returns?method=none", "/v1/models/demo/history"))
        return Req("GET", path, (400,), check=non_empty)
    if kind == "bad-method":
        return Req(rng.choice(("DELETE", "PATCH")), "/v1/models/demo", (405,), b"", check=non_empty)
    if kind == "bad-token":
        token = rng.choice((None, "not-the-token", s.token[:-1] + ("x" if s.token[-1] != "x" else "y")))
        headers = {"Authorization": f"Bearer {token}"} if token else {}
        method, path, body = rng.choice((("PUT", "/v1/portfolios/soak-hostile", b"asset,weight\nZQ-0001,1\n"),
                                         ("POST", "/v1/returns", b"date,asset,return\n2025-12-31,ZQ-0001,0.01\n"),
                                         ("POST", "/v1/models/demo/refresh", b""),
                                         ("PUT", "/v1/models/demo", b'{"factors":3}'),
                                         ("DELETE", "/v1/portfolios/demo-book", b"")))
        headers["Content-Type"] = "text/csv" if body.startswith(b"asset") or body.startswith(b"date") else \
            "application/json"
        return Req(method, path, (401,), body, headers, non_empty)
    if kind == "bad-json":
        body = rng.choice((b'{"factors": 4,', b"[1, 2", b'{"method": "ml"} trailing', b"not json at all"))
        if rng.random() < 0.5:
            return Req("PUT", "/v1/models/soak-hostile", (400,), body, s.auth({"Content-Type": "application/json"}),
                       non_empty)
        return Req("POST", "/v1/models/demo/risk", (400,), body, {"Content-Type": "application/json"}, non_empty)
    if kind == "bad-csv":
        if rng.random() < 0.5:
            return Req("POST", "/v1/returns?file=soak-bad.csv", (422,),
                       b"date,asset,return\n2025-12-31,ZQ-0001,12%\n", s.auth({"Content-Type": "text/csv"}), non_empty)
        return Req("PUT", "/v1/portfolios/soak-hostile", (422,), b"asset,weight\nZQ-0001,abc\n",
                   s.auth({"Content-Type": "text/csv"}), non_empty)
    raise ValueError(kind)


def upload(s, name, body):
    return Req("POST", f"/v1/returns?file={name}", (200,), body, s.auth({"Content-Type": "text/csv"}),
               is_json_object, after=lambda st, b: upload_done(s, b))


def upload_done(s, body):
    try:
        outcome = json.loads(body)["outcome"]
    except (ValueError, KeyError, TypeError) as e:
        return f"upload answer without an outcome: {e}"
    with s.lock:
        s.uploads_ok[outcome] = s.uploads_ok.get(outcome, 0) + 1
    return None


def job_started(s, body):
    try:
        job = json.loads(body)
        jid = int(job["id"])
    except (ValueError, KeyError, TypeError) as e:
        return f"refresh answer without a job id: {e}"
    with s.lock:
        if jid not in s.jobs_finished:
            s.pending_jobs.add(jid)
        s.jobs_seen.add(jid)
    return job_seen(s, body)


def job_seen(s, body):
    """A job's state: an ended job leaves the pending set; a failed or stopped one is an error."""
    try:
        job = json.loads(body)
        jid, state = int(job["id"]), job["state"]
    except (ValueError, KeyError, TypeError) as e:
        return f"job answer without id and state: {e}"
    if state in ("queued", "running"):
        return None
    with s.lock:
        s.pending_jobs.discard(jid)
        s.jobs_finished.add(jid)
    if state == "finished":
        return None
    message = f"refresh job {jid} ended '{state}': {job.get('error')}"
    with s.lock:
        s.job_errors.append(message)
    return message


# The mix, in shares of the requests (they need not add up to 100): reads 83%, writes 11%,
# hostile requests 6%.
KINDS = {
    "index": 1, "health": 3, "models": 4, "windows": 4,
    "exposures-json": 9, "exposures-csv": 9, "exposures-assets": 5, "specific-risk": 5,
    "risk-book": 8, "risk-post": 5, "drift": 5, "history": 4, "alerts": 2,
    "factor-returns": 3, "residuals": 2, "portfolios": 3, "job-poll": 4,
    "portfolio-put": 4, "upload-new": 1.5, "upload-correction": 1, "upload-same": 1.5, "refresh": 2,
    "bad-route": 1, "bad-model": 0.5, "bad-param": 1, "bad-method": 0.5, "bad-token": 1, "bad-json": 1,
    "bad-csv": 0.5,
}


class Client(threading.Thread):
    RETRYABLE = (http.client.RemoteDisconnected, ConnectionResetError, BrokenPipeError)

    def __init__(self, index, shared, host, port, stop, t_start, seed, timeout, reconnect_share):
        super().__init__(name=f"client-{index}", daemon=True)
        self.rng = random.Random(seed * 1000 + index)
        self.s, self.host, self.port, self.stop, self.t_start = shared, host, port, stop, t_start
        self.timeout, self.reconnect_share = timeout, reconnect_share
        self.conn, self.conn_uses, self.previous = None, 0, None
        self.latency = {}      # kind -> list of seconds
        self.by_minute = {}    # minute of the run -> list of seconds, every kind
        self.errors_by_minute = {}
        self.statuses = {}     # kind -> {status: count}
        self.errors = []       # (elapsed s, kind, method, path, message)
        self.error_count = {}  # kind -> count
        self.retries = 0
        self.connections = 0
        self.bytes_in = 0
        kinds = list(KINDS)
        self.kinds, self.weights = kinds, [KINDS[k] for k in kinds]

    def close(self):
        if self.conn is not None:
            self.conn.close()
        self.conn, self.conn_uses = None, 0

    def exchange(self, req):
        if self.conn is None:
            self.conn = http.client.HTTPConnection(self.host, self.port, timeout=self.timeout)
            self.connections += 1
        self.conn_uses += 1
        self.conn.request(req.method, req.path, body=req.body, headers=req.headers)
        resp = self.conn.getresponse()
        body = resp.read()
        if resp.will_close:
            self.close()
        return resp.status, body

    def one(self, kind):
        req = plan(kind, self.rng, self.s)
        if self.rng.random() < self.reconnect_share:
            self.close()
        t0 = time.perf_counter()
        status, body, message = None, b"", None
        uses, previous = self.conn_uses, self.previous
        self.previous = kind
        try:
            reused = self.conn is not None and self.conn_uses > 0
            try:
                status, body = self.exchange(req)
            except self.RETRYABLE:
                self.close()
                if not (reused and req.method == "GET"):
                    raise
                self.retries += 1
                status, body = self.exchange(req)
        except socket.timeout:
            message = f"no answer within {self.timeout} s"
            self.close()
        except (OSError, http.client.HTTPException) as e:
            where = (f"on a connection that had served {uses} requests, the last a {previous}" if uses
                     else "on a new connection")
            message = f"{type(e).__name__}: {e} ({where})"
            self.close()
        elapsed = time.perf_counter() - t0
        if message is None:
            self.bytes_in += len(body)
            per = self.statuses.setdefault(kind, {})
            per[status] = per.get(status, 0) + 1
            if status not in req.expect:
                detail = body[:200].decode("utf-8", "replace")
                message = f"status {status}, expected {'/'.join(map(str, sorted(req.expect)))}: {detail}"
            elif req.check is not None:
                message = req.check(body)
            if message is None and req.after is not None:
                message = req.after(status, body)
        self.latency.setdefault(kind, []).append(elapsed)
        minute = int((time.monotonic() - self.t_start) // 60)
        self.by_minute.setdefault(minute, []).append(elapsed)
        if message is not None:
            self.errors_by_minute[minute] = self.errors_by_minute.get(minute, 0) + 1
            self.error_count[kind] = self.error_count.get(kind, 0) + 1
            if len(self.errors) < MAX_ERRORS_KEPT:
                self.errors.append((time.monotonic() - self.t_start, kind, req.method, req.path[:160], message))

    def run(self):
        while not self.stop.is_set():
            self.one(self.rng.choices(self.kinds, self.weights)[0])
        self.close()


def file_mb(path):
    try:
        return os.path.getsize(path) / 2**20
    except OSError:
        return 0.0


def connection_burst(shared, host, port, n, rounds, seed, timeout):
    """Before the load: n clients open a new connection at the same moment and each sends
    one POST with a body (the risk of posted weights), `rounds` times. A daemon must take
    such a burst (a browser or a script's pool opening connections, or clients coming back
    after a restart): every one gets an answer (200, or a clear 429/503 from a cap on
    connections), none is reset or dropped."""
    done = []
    t0 = time.monotonic()
    for r in range(rounds):
        barrier = threading.Barrier(n)
        group = [Client(10000 + r * n + i, shared, host, port, threading.Event(), t0, seed, timeout, 0.0)
                 for i in range(n)]

        def go(c):
            try:
                barrier.wait(30)
            except threading.BrokenBarrierError:
                pass
            c.one("burst")
            c.close()

        threads = [threading.Thread(target=go, args=(c,), daemon=True) for c in group]
        for t in threads:
            t.start()
        for t in threads:
            t.join(timeout + 10)
        done += group
        time.sleep(1)
    return done


class Sampler(threading.Thread):
    def __init__(self, daemon_, t_start, every):
        super().__init__(name="sampler", daemon=True)
        self.d, self.t_start, self.every = daemon_, t_start, every
        self.samples = []
        self.halt = threading.Event()

    def take(self, label):
        m = self.d.memory()
        if m is not None:
            m.update(t=round(time.monotonic() - self.t_start, 1), label=label, cpu_s=self.d.cpu_seconds(),
                     request_cpu_s=self.d.request_cpu_seconds(),
                     db_mb=file_mb(self.d.db_path), wal_mb=file_mb(self.d.db_path + "-wal"))
            self.samples.append(m)
        return m

    def run(self):
        while not self.halt.wait(self.every):
            self.take("")


# ---------------------------------------------------------------------------------------
# After the load: jobs, a last refresh, the model's state.

def api(host, port, method, path, token=None, body=b""):
    conn = http.client.HTTPConnection(host, port, timeout=60)
    try:
        headers = {"Authorization": f"Bearer {token}"} if token else {}
        conn.request(method, path, body=body if method != "GET" else None, headers=headers)
        resp = conn.getresponse()
        data = resp.read()
        return resp.status, (json.loads(data) if data[:1] == b"{" else data)
    finally:
        conn.close()


def wait_jobs(host, port, limit):
    """Until no job is queued or running; returns the list of jobs, or raises on time-out."""
    deadline = time.monotonic() + limit
    while True:
        status, body = api(host, port, "GET", "/v1/jobs")
        if status != 200:
            raise RuntimeError(f"GET /v1/jobs answered {status}")
        jobs = body["jobs"]
        if all(j["state"] not in ("queued", "running") for j in jobs):
            return jobs
        if time.monotonic() > deadline:
            raise RuntimeError(f"refresh jobs still running after {limit} s")
        time.sleep(1)


def final_checks(host, port, token, shared):
    """Problems found after the load (each an error): failed jobs, a model not current."""
    problems = []
    jobs = wait_jobs(host, port, SETTLE_SECONDS)
    for j in jobs:
        if j["state"] != "finished":
            problems.append(f"refresh job {j['id']} ended '{j['state']}': {j.get('error')}")
    status, job = api(host, port, "POST", "/v1/models/demo/refresh", token)
    if status != 202:
        return problems + [f"last refresh: POST answered {status}: {job}"], None, None
    jobs = wait_jobs(host, port, SETTLE_SECONDS)
    last = next(j for j in jobs if j["id"] == job["id"])
    if last["state"] != "finished":
        problems.append(f"last refresh job {last['id']} ended '{last['state']}': {last.get('error')}")
    status, model = api(host, port, "GET", "/v1/models/demo")
    if status != 200:
        return problems + [f"GET /v1/models/demo answered {status} after the load"], last, None
    expected = len(shared.u.as_of_dates) + len(shared.new_dates)
    if model["stale_windows"] != 0:
        problems.append(f"model demo has {model['stale_windows']} stale windows after the last refresh")
    if model["windows"] != expected:
        problems.append(f"model demo has {model['windows']} windows, expected {expected} "
                        f"({len(shared.u.as_of_dates)} at the start + {len(shared.new_dates)} new dates)")
    return problems, last, model


# ---------------------------------------------------------------------------------------
# The report.

def pct(values, q):
    """The q-th percentile (0..100) by linear interpolation between order statistics."""
    v = sorted(values)
    if not v:
        return float("nan")
    k = (len(v) - 1) * q / 100
    lo = int(k)
    hi = min(lo + 1, len(v) - 1)
    return v[lo] + (v[hi] - v[lo]) * (k - lo)


def latency_row(name, values, errors, expected):
    ms = [x * 1000 for x in values]
    return {"kind": name, "requests": len(ms), "errors": errors, "expected": expected,
            "p50_ms": pct(ms, 50), "p90_ms": pct(ms, 90), "p99_ms": pct(ms, 99),
            "max_ms": max(ms) if ms else float("nan"), "mean_ms": statistics.fmean(ms) if ms else float("nan")}


def malloc_arenas(threads):
    """glibc's arena count: MALLOC_ARENA_MAX if set, else 8 per core on 64-bit, at most one
    per thread (glibc manual, "Memory Allocation Tunables", glibc.malloc.arena_max)."""
    env = os.environ.get("MALLOC_ARENA_MAX", "")
    limit = int(env) if env.isdigit() and int(env) > 0 else 8 * (os.cpu_count() or 1)
    return min(limit, threads + 3)


def memory_bound(start_rss, cache_mb, threads):
    """The most the daemon may hold after the load, in MiB, with the reason for each part."""
    arenas = malloc_arenas(threads)
    parts = [
        ("resident at start (database open, no request yet)", start_rss),
        ("response cache (--cache-mb): rendered exposures and specific risk, bounded by it", cache_mb),
        (f"SQLite page cache, {SQLITE_PAGE_CACHE_MB} MiB each (SQLite's default cache_size) for the "
         f"{threads} worker threads' own connections, the refresh thread's and the main thread's",
         SQLITE_PAGE_CACHE_MB * (threads + 2)),
        ("refresh working set: the dense returns block (~800 dates x 640 assets x 8 B = 4 MB), "
         "the fit's panel and moments (600 x 600 x 8 B = 3 MB each), the 8 windows of the risk-model cache",
         REFRESH_ALLOWANCE_MB),
        (f"allocator: {arenas} malloc arenas (8 per core, one per thread at most), each keeping up to "
         f"{ARENA_ALLOWANCE_MB} MiB it was given back: glibc raises its mmap threshold to the largest block "
         "freed (a window's returns, 504 x 640 x 8 B = 2.6 MB; a whole-window answer, ~0.5 MB), so such "
         "blocks come from the arenas, which trim only above twice that", arenas * ARENA_ALLOWANCE_MB),
        ("thread stacks touched (about 70 threads)", STACKS_MB),
    ]
    return sum(p[1] for p in parts), parts


def per_minute(clients, samples, seconds_run):
    """One row per minute of the load: throughput, latency, errors, the daemon's CPU and
    memory, the write-ahead log's size. Rising CPU per request would say the daemon's work
    grows with the run; falling CPU at steady work per request, that the machine is busy."""
    rows = []
    minutes = sorted({m for c in clients for m in c.by_minute})

    def at(t):  # the last sample at or before t (samples every 10 s)
        before = [x for x in samples if x["t"] <= t + 0.5 and x.get("cpu_s") is not None]
        return before[-1] if before else None

    for m in minutes:
        lat = [x * 1000 for c in clients for x in c.by_minute.get(m, [])]
        span = min(60.0, seconds_run - 60 * m)
        if span < 5:
            continue
        a, b = at(60 * m), at(60 * m + span)
        cpu = (b["cpu_s"] - a["cpu_s"]) if a and b and b is not a else float("nan")
        req_cpu = (b["request_cpu_s"] - a["request_cpu_s"]) if a and b and b is not a and \
            b.get("request_cpu_s") is not None and a.get("request_cpu_s") is not None else float("nan")
        cpu_span = (b["t"] - a["t"]) if a and b and b is not a else float("nan")
        rows.append({"minute": m + 1, "requests_per_s": len(lat) / span, "p50_ms": pct(lat, 50),
                     "p99_ms": pct(lat, 99), "errors": sum(c.errors_by_minute.get(m, 0) for c in clients),
                     "daemon_cpus": cpu / cpu_span if cpu_span else float("nan"),
                     "refresh_cpus": (cpu - req_cpu) / cpu_span if cpu_span else float("nan"),
                     "cpu_ms_per_request": 1000 * req_cpu / (len(lat) * cpu_span / span) if lat and cpu_span
                     else float("nan"),
                     "rss_mb": b["rss_mb"] if b else float("nan"), "wal_mb": b["wal_mb"] if b else float("nan")})
    return rows


TCP_COUNTERS = ("ListenOverflows", "ListenDrops", "TCPReqQFullDoCookies", "TCPReqQFullDrop", "TCPAbortOnData",
                "TCPAbortOnClose")


def tcp_counters():
    """The kernel's TCP counters that tell a full listen queue and connections reset with
    data unread (/proc/net/netstat, TcpExt). They count for the whole network namespace:
    other programs' loopback traffic during the run adds to them."""
    found = {}
    try:
        with open("/proc/net/netstat") as f:
            lines = f.read().splitlines()
    except OSError:
        return found
    for names, values in zip(lines[::2], lines[1::2]):
        if names.startswith("TcpExt:"):
            for name, value in zip(names.split()[1:], values.split()[1:]):
                if name in TCP_COUNTERS:
                    found[name] = int(value)
    return found


def loadavg():
    with open("/proc/loadavg") as f:
        return " ".join(f.read().split()[:3])


def fmt_ms(x):
    return f"{x:8.1f}" if x == x else "       -"


def report(r):
    out = []
    w = out.append
    w("factorwatch soak report")
    w("=======================")
    w(f"binary:   {r['binary']}")
    w(f"run:      {r['clients']} clients, {r['seconds_run']:.0f} s of load (asked {r['seconds_asked']} s), "
      f"seed {r['seed']}, daemon --cache-mb {r['cache_mb']}, {r['daemon_threads']} worker threads, "
      f"{os.cpu_count()} CPUs shared with the client (the client is Python: it uses CPU too)")
    w(f"set-up:   {r['setup_seconds']:.1f} s (demo universe seed 7, model demo from {FIRST_AS_OF}: "
      f"{r['windows_at_start']} windows)")
    w("")
    if r["burst"]:
        w(f"burst:    {r['burst']} requests before the load, {r['burst_size']} new connections at once each "
          "time (kind 'burst' below; not in the throughput)")
    w(f"requests: {r['total'] - r['burst']} in {r['seconds_run']:.1f} s = {r['throughput']:.1f} requests/s; "
      f"{r['bytes_in'] / 1e6:.0f} MB received; {r['connections']} connections opened; "
      f"{r['retries']} GETs retried after a dropped keep-alive connection")
    w("tcp:      " + (", ".join(f"{k} {v:+d}" for k, v in r["tcp"].items()) or "counters not readable") +
      " (kernel counters over the burst and the load, whole network namespace: a full listen queue, "
      "connections reset with data unread)")
    w(f"cpu:      daemon {r['daemon_cpu']:.0f} s, client {r['client_cpu']:.0f} s over {r['seconds_run']:.0f} s; "
      f"machine load average {r['loadavg_start']} at the start, {r['loadavg_end']} at the end")
    w("")
    w(f"{'kind':<18} {'requests':>9} {'errors':>6}  {'statuses':<9} {'p50 ms':>8} {'p90 ms':>8} {'p99 ms':>8} "
      f"{'max ms':>8}")
    for row in r["kinds"] + [r["overall"]]:
        w(f"{row['kind']:<18} {row['requests']:>9} {row['errors']:>6}  {row['expected']:<9} {fmt_ms(row['p50_ms'])} "
          f"{fmt_ms(row['p90_ms'])} {fmt_ms(row['p99_ms'])} {fmt_ms(row['max_ms'])}")
    w("")
    w(f"uploads:  {r['uploads']}; new dates {r['new_dates']}")
    w(f"jobs:     {r['jobs_started']} refresh jobs started by the clients; last refresh: {r['last_refresh']}")
    w(f"model:    {r['model_after']}")
    w("")
    w("by minute of the load (CPU in cores busy: the whole daemon, and its refresh threads at nice +10;")
    w("CPU ms/req: the request threads' CPU per request; the write-ahead log's size at the minute's end):")
    w(f"  {'minute':>6} {'req/s':>7} {'p50 ms':>8} {'p99 ms':>8} {'errors':>6} {'daemon CPU':>10} {'refresh':>8} "
      f"{'CPU ms/req':>10} {'rss MiB':>8} {'wal MiB':>8}")
    for row in r["minutes"]:
        w(f"  {row['minute']:>6} {row['requests_per_s']:7.1f} {fmt_ms(row['p50_ms'])} {fmt_ms(row['p99_ms'])} "
          f"{row['errors']:>6} {row['daemon_cpus']:10.2f} {row['refresh_cpus']:8.2f} {row['cpu_ms_per_request']:10.2f} "
          f"{row['rss_mb']:8.1f} {row['wal_mb']:8.1f}")
    w("")
    w("memory of the daemon (MiB; threads; open descriptors):")
    for m in r["memory_samples"]:
        if m["label"] or len(r["memory_samples"]) <= 15 or m["t"] % 60 < SAMPLE_SECONDS:
            w(f"  t={m['t']:7.1f} s  rss {m['rss_mb']:7.1f} (anon {m['anon_mb']:7.1f})  hwm {m['hwm_mb']:7.1f}  "
              f"threads {m['threads']:3}  fds {m['fds']:4}  {m['label']}")
    w(f"rss growth over the last half of the load: {r['second_half_growth_mb']:+.1f} MiB "
      "(a leak keeps growing there; caches and allocator arenas fill early and then stay)")
    w(f"bound on rss at the end: {r['memory_bound_mb']:.0f} MiB =")
    for text, mb in r["memory_bound_parts"]:
        w(f"  {mb:7.1f}  {text}")
    w("")
    w(f"errors:   {r['error_total']}")
    groups = {}
    for e in r["errors"]:
        key = (e[1], e[4][:110])
        groups[key] = groups.get(key, 0) + 1
    if groups:
        w("  by kind and message (of the first errors kept):")
        for (kind, message), n in sorted(groups.items(), key=lambda g: -g[1])[:10]:
            w(f"  {n:6}  {kind:<17} {message}")
        w("  the first ones:")
    for e in r["errors"][:10]:
        w(f"  t={e[0]:7.1f} s  {e[1]:<17} {e[2]} {e[3]}\n      {e[4]}")
    if r["server_errors_logged"]:
        w(f"5xx lines in the daemon's request log: {len(r['server_errors_logged'])}")
        for line in r["server_errors_logged"][:10]:
            w(f"  {line}")
    w("")
    w("checks:")
    for name, ok, detail in r["checks"]:
        w(f"  {'pass' if ok else 'FAIL'}  {name}: {detail}")
    w("")
    w(f"result:   {'PASS' if r['pass'] else 'FAIL'}")
    return "\n".join(out)


# ---------------------------------------------------------------------------------------

def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0],
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--clients", type=int, default=16, help="client threads (default 16)")
    ap.add_argument("--seconds", type=float, default=600, help="length of the load (default 600)")
    ap.add_argument("--binary", default=os.path.join(ROOT, "build", "server", "factorwatch"),
                    help="the factorwatch program (default build/server/factorwatch)")
    ap.add_argument("--generator", help="the demo generator (default: demo-universe/factorwatch-demo-universe "
                                        "in the binary's build directory)")
    ap.add_argument("--cache-mb", type=int, default=32,
                    help="the daemon's --cache-mb (default 32: small, so that the cache fills and evicts)")
    ap.add_argument("--memory-bound-mb", type=float,
                    help="bound on the daemon's resident size at the end (default: see memory_bound)")
    ap.add_argument("--max-new-dates", type=int, default=250,
                    help="most new dates uploaded (each adds a window to fit; default 250)")
    ap.add_argument("--timeout", type=float, default=60, help="seconds to wait for one answer (default 60)")
    ap.add_argument("--reconnect-share", type=float, default=0.05,
                    help="share of requests sent on a new connection (default 0.05)")
    ap.add_argument("--serve-option", action="append", default=[],
                    help="extra option for `factorwatch serve` (repeat; e.g. --serve-option=--threads=32)")
    ap.add_argument("--burst", type=int, default=64,
                    help="new connections opened at once before the load (default 64, the daemon's default "
                         "--threads; 0: none)")
    ap.add_argument("--burst-rounds", type=int, default=3, help="how many such bursts (default 3)")
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--json-out", help="write the figures as JSON to this file too")
    ap.add_argument("--keep", action="store_true", help="keep the temporary directory (printed)")
    a = ap.parse_args()
    if a.clients < 1 or a.seconds <= 0:
        ap.error("--clients and --seconds must be positive")
    binary = os.path.abspath(a.binary)
    generator = a.generator or os.path.join(os.path.dirname(os.path.dirname(binary)), "demo-universe",
                                            "factorwatch-demo-universe")
    for path in (binary, generator):
        if not os.access(path, os.X_OK):
            ap.error(f"{path} is not an executable (build it: cmake --build build --target factorwatch "
                     "factorwatch-demo-universe)")

    tmp = tempfile.mkdtemp(prefix="factorwatch-soak-")
    log(f"temporary directory {tmp}")
    daemon = None
    try:
        t0 = time.monotonic()
        try:
            data, universe = prepare(binary, generator, tmp)
            threads = daemon_threads(binary)
            for opt in a.serve_option:
                if opt.startswith("--threads="):
                    threads = int(opt.split("=", 1)[1])
            daemon = Daemon(binary, data, tmp, a.cache_mb, a.serve_option)
            token = subprocess.run([binary, "--data", data, "token"], capture_output=True, text=True,
                                   check=True).stdout.strip()
            status, latest = api(daemon.host, daemon.port, "GET", "/v1/models/demo/exposures")
            if status != 200:
                raise SetupError(f"GET exposures answered {status} before the load")
            universe.window_assets = [x["asset"] for x in latest["assets"]]
        except (SetupError, subprocess.SubprocessError, OSError, ValueError) as e:
            log(f"set-up failed: {e}")
            return 2
        setup_seconds = time.monotonic() - t0
        log(f"daemon pid {daemon.pid} ready on {daemon.host}:{daemon.port}; set-up {setup_seconds:.1f} s")

        shared = Shared(universe, token, a.max_new_dates)
        sampler = Sampler(daemon, time.monotonic(), SAMPLE_SECONDS)
        start_mem = sampler.take("start (before the burst)")
        tcp0 = tcp_counters()
        burst_clients = []
        if a.burst > 0:
            log(f"connection burst: {a.burst} new connections at once, {a.burst_rounds} times")
            burst_clients = connection_burst(shared, daemon.host, daemon.port, a.burst, a.burst_rounds, a.seed,
                                             a.timeout)
        stop = threading.Event()
        t_start = time.monotonic()
        sampler.t_start = t_start   # the load's clock; the start sample stays at t = 0
        sampler.start()
        cpu0, client0, loadavg_start = daemon.cpu_seconds(), os.times(), loadavg()
        clients = [Client(i, shared, daemon.host, daemon.port, stop, t_start, a.seed, a.timeout, a.reconnect_share)
                   for i in range(a.clients)]
        for c in clients:
            c.start()
        log(f"{a.clients} clients running for {a.seconds:.0f} s")
        try:
            next_note = 60
            while time.monotonic() - t_start < a.seconds:
                time.sleep(max(0.0, min(1.0, a.seconds - (time.monotonic() - t_start))))
                if daemon.proc.poll() is not None:
                    log(f"the daemon exited (status {daemon.proc.returncode}) during the load")
                    break
                if time.monotonic() - t_start >= next_note:
                    done = sum(sum(len(v) for v in c.latency.values()) for c in clients)
                    errs = sum(sum(c.error_count.values()) for c in clients)
                    log(f"{next_note:.0f} s: {done} requests, {errs} errors, rss {daemon.memory() or {}}")
                    next_note += 60
        except KeyboardInterrupt:
            log("interrupted: stopping the clients")
        stop.set()
        for c in clients:
            c.join(a.timeout + 10)
        seconds_run = time.monotonic() - t_start
        cpu1, client1, tcp1 = daemon.cpu_seconds(), os.times(), tcp_counters()
        end_load = sampler.take("end of load")

        checks, problems, last, model = [], [], None, None
        alive = daemon.proc.poll() is None
        if alive:
            try:
                problems, last, model = final_checks(daemon.host, daemon.port, token, shared)
            except (OSError, http.client.HTTPException, RuntimeError, KeyError, ValueError) as e:
                problems = [f"after the load: {type(e).__name__}: {e}"]
            time.sleep(3)   # kept-alive connections idle out (2 s) before the last sample
        settled = sampler.take("jobs settled, idle")
        sampler.halt.set()
        log_5xx = daemon.server_errors_logged()
        code, stop_s = daemon.stop()
        integrity = "not checked"
        try:
            with sqlite3.connect(f"file:{daemon.db_path}?mode=ro", uri=True) as db:
                integrity = db.execute("PRAGMA integrity_check").fetchone()[0]
        except sqlite3.Error as e:
            integrity = f"{type(e).__name__}: {e}"

        kinds, all_lat, total_errors = [], [], 0
        everyone = clients + burst_clients
        errors = sorted(e for c in everyone for e in c.errors)
        for kind in list(KINDS) + ["burst"]:
            lat = [x for c in everyone for x in c.latency.get(kind, [])]
            if kind == "burst" and not lat:
                continue
            n_err = sum(c.error_count.get(kind, 0) for c in everyone)
            statuses = {}
            for c in everyone:
                for st, n in c.statuses.get(kind, {}).items():
                    statuses[st] = statuses.get(st, 0) + n
            expected = "/".join(str(x) for x in sorted(statuses)) or "-"
            kinds.append(latency_row(kind, lat, n_err, expected))
            all_lat += lat
            total_errors += n_err
        errors += [(seconds_run, "after the load", "", "", p) for p in problems]
        total_errors += len(problems)
        threads_now = threads
        bound, parts = memory_bound(start_mem["rss_mb"], a.cache_mb, threads_now)
        if a.memory_bound_mb:
            bound, parts = a.memory_bound_mb, [("given with --memory-bound-mb", a.memory_bound_mb)]
        end_rss = max(m["rss_mb"] for m in (end_load, settled) if m) if (end_load or settled) else float("inf")
        peak = max(m["hwm_mb"] for m in sampler.samples) if sampler.samples else float("nan")
        during = [m for m in sampler.samples if m["t"] <= seconds_run]
        half = [m for m in during if m["t"] >= seconds_run / 2]
        growth = (half[-1]["rss_mb"] - half[0]["rss_mb"]) if len(half) >= 2 else float("nan")
        burst_errors = sum(c.error_count.get("burst", 0) for c in burst_clients)
        load_errors = total_errors - burst_errors
        checks.append(("no errors under load", load_errors == 0,
                       f"{load_errors} errors in {len(all_lat) - len(burst_clients)} requests"
                       + (" (some after the load)" if problems else "")))
        if burst_clients:
            checks.append(("connection burst answered", burst_errors == 0,
                           f"{burst_errors} of {len(burst_clients)} requests failed ({a.burst} new connections at once)"))
        checks.append(("daemon alive through the load", alive,
                       "answered until the end" if alive else f"exited with {daemon.proc.returncode}"))
        checks.append(("memory at the end within the bound", end_rss <= bound,
                       f"rss {end_rss:.1f} MiB at the end (start {start_mem['rss_mb']:.1f}, peak hwm {peak:.1f}) "
                       f"<= {bound:.0f} MiB"))
        if seconds_run >= LEAK_CHECK_SECONDS:
            checks.append(("no growth once warm", growth <= GROWTH_ALLOWANCE_MB,
                           f"rss grew {growth:+.1f} MiB over the last half of the load <= {GROWTH_ALLOWANCE_MB} MiB"))
        else:
            checks.append(("no growth once warm", True, f"not judged: runs under {LEAK_CHECK_SECONDS} s end while "
                           f"the caches still fill (grew {growth:+.1f} MiB over the last half)"))
        checks.append(("clean stop on SIGTERM", code == 0, f"exit {code} after {stop_s:.1f} s"))
        checks.append(("database intact", integrity == "ok", f"PRAGMA integrity_check: {integrity}"))
        r = {
            "binary": binary, "clients": a.clients, "seconds_asked": a.seconds, "seconds_run": seconds_run,
            "seed": a.seed, "cache_mb": a.cache_mb, "daemon_threads": threads_now, "setup_seconds": setup_seconds,
            "windows_at_start": len(universe.as_of_dates),
            "total": len(all_lat), "burst": len(burst_clients), "burst_size": a.burst,
            "throughput": (len(all_lat) - len(burst_clients)) / seconds_run if seconds_run else 0.0,
            "bytes_in": sum(c.bytes_in for c in clients), "connections": sum(c.connections for c in clients),
            "retries": sum(c.retries for c in clients),
            "daemon_cpu": (cpu1 or 0) - (cpu0 or 0),
            "client_cpu": (client1.user + client1.system) - (client0.user + client0.system),
            "kinds": kinds, "overall": latency_row("all", all_lat, total_errors, ""),
            "uploads": dict(sorted(shared.uploads_ok.items())), "new_dates": len(shared.new_dates),
            "jobs_started": len(shared.jobs_seen),
            "last_refresh": (last or {}).get("summary") and
            {k: last["summary"][k] for k in ("grid_windows", "already_current", "fitted", "refitted_stale")},
            "model_after": model and {k: model[k] for k in ("windows", "stale_windows", "latest_as_of")},
            "memory_samples": sampler.samples, "second_half_growth_mb": growth,
            "minutes": per_minute(clients, sampler.samples, seconds_run),
            "loadavg_start": loadavg_start, "loadavg_end": loadavg(),
            "tcp": {k: tcp1[k] - tcp0.get(k, 0) for k in tcp1}, "memory_bound_mb": bound, "memory_bound_parts": parts,
            "error_total": total_errors, "errors": errors, "server_errors_logged": log_5xx,
            "checks": checks, "pass": all(ok for _, ok, _ in checks),
        }
        print(report(r), flush=True)
        if a.json_out:
            with open(a.json_out, "w") as f:
                json.dump(r, f, indent=1, default=str)
        return 0 if r["pass"] else 1
    finally:
        if daemon is not None and daemon.proc.poll() is None:
            daemon.stop()
        if a.keep:
            log(f"kept {tmp}")
        else:
            shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
