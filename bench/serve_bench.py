#!/usr/bin/python3
"""HTTP serving benchmark: `factorwatch serve` answering the exposures of a 5,000-asset
window, as CSV and as JSON, to 8 concurrent clients on loopback while a refresh runs,
against plain static file servers handing out the very same bytes, in the same run.

    /usr/bin/python3 bench/serve_bench.py [--rounds 3] [--build DIR] [--no-build] [--out DIR]
                                          [--duration 20] [--no-extras] [--keep-data]

Target (from the issue): p99 latency under 10 ms at 8 concurrent clients on loopback,
no errors, measured with a load tool from Debian's packages while a refresh runs.

Data: bench/storage_data.cpp writes 5,000 assets x 560 dates of the planted panel as a
long CSV; `factorwatch load` stores it in a new data directory under /tmp. Model `wide`:
every asset, PCA, 10 factors, window 504, first as-of the last date, so that exactly
one window is fitted (`factorwatch refresh wide`, before the daemon starts). PCA only
makes the window quickly; serving it does not depend on the method.

The refresh: eight models `background`, `background-2` .. `background-8`, each a
universe file of 2,000 assets (overlapping slices), ML, 10 factors, window 504, step 1:
57 windows each. Before every load run the script gives some of them a new version over
HTTP (PUT /v1/models/{name} with a slightly different min_coverage; every asset has
full coverage, so the fit is the same work) and starts their refreshes with
POST /v1/models/{name}/refresh (the token from `factorwatch token`). The daemon runs
one job at a time and queues the rest, so the jobs follow each other without a gap.
The run starts once the first job is fitting; GET /v1/jobs/{id} before and after the
run records each job's state and done/total. A run counts only if a job was running
at its start and one was still running or queued at its end; otherwise it is
repeated with twice as many jobs. The refresh thread runs at nice +10 (the daemon's
choice), so it yields the CPUs to the requests and mostly waits while the load runs;
after the run the script lets the jobs finish before the next run.

Load: `wrk -t2 -c8 -d20s --latency` (Debian's wrk 4.1) on one URL, with
bench/serve_wrk.lua printing wrk's own figures as JSON: requests/s, bytes, latency
p50/p90/p99/p99.9 and max, errors (connect, read, write, timeout, non-2xx). wrk keeps
8 connections open and sends the next request on a connection as soon as the previous
answer is in (a closed loop: the load is as heavy as the machine allows). URLs:
/v1/models/wide/exposures?format=csv and ?format=json, the whole 5,000-asset window
(about 1.5 MB and 1.9 MB). Before the load one request of each (a fresh connection,
http.client) times the first, rendering request; later ones are served from the
daemon's response cache.

Peers, under the same wrk load and the same refresh (the jobs run in our daemon and
compete for the CPUs during the peers' runs as during ours): the two bodies our daemon
sent, saved to files, served by
  nginx   Debian's nginx-light, 2 worker processes, sendfile on, keep-alive up to 1,000
          requests (nginx's default), one access-log line per request (ours logs one
          too);
  python  the standard library's ThreadingHTTPServer with SimpleHTTPRequestHandler (what
          `python3 -m http.server` runs), with protocol HTTP/1.1 so that wrk's
          connections are kept alive as with the other two servers.
The peers read nothing from SQLite and render nothing: they show what handing out
1.5-1.9 MB per request costs on this machine, which is the floor for ours.
Ratio = peer's figure / ours (above 1: ours is better).

Rounds: --rounds (3) rounds of ours, nginx and python, CSV then JSON each, in an order
reversed every other round; medians over rounds, ranges beside them. Extras, to see
where the time goes (skipped with --no-extras), one round each unless said: all six
with no refresh; ours with `wrk -t1` (one client thread); ours and nginx for a client
that sends `Accept-Encoding: gzip` (nginx serves the daemon's own compressed bodies
with gzip_static; wrk does not decompress); ours and nginx with 8 connections more
than the daemon's request threads (its default --threads, read from `serve --help`;
a kept-alive connection holds a thread); every server with one connection. At the end the
daemon's resident memory (VmRSS, VmHWM) is read from /proc, and the daemon is stopped
with SIGTERM two seconds into a 6-second load with a refresh running: it must exit 0
within 30 s, and the database must pass PRAGMA integrity_check. Last, the same binary
is started again with a small preloaded library (compiled from NODELAY_SHIM_C below
into BUILD) that sets TCP_NODELAY on every accepted socket, and ours is measured again
(--rounds rounds, and one connection): the daemon's code is not changed.

Every load run waits for a quiet machine first (no compiler, CPUs 90% idle, as
bench/quiet_run.py) and is repeated when a compiler appeared or other processes used
more than 5% of the CPUs during it (CPU time of every process not part of the run,
from /proc). Results: raw JSON lines in OUT/serve_raw.jsonl and the report in
OUT/serve_bench.txt (OUT defaults to BUILD/results, BUILD to build-servebench).
`serve_bench.py report RAW.jsonl` prints the report again; `serve_bench.py static-peer
--dir D` is the python peer process. About 25 minutes on a quiet 2-core machine.
"""
import argparse
import http.client
import json
import os
import re
import shutil
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
sys.path.insert(0, HERE)

ASSETS, DATES, WINDOW, FACTORS = 5000, 560, 504, 10
BG_ASSETS, BG_OFFSETS = 2000, (0, 430, 860, 1290, 1720, 2150, 2580, 3000)
BG_NAMES = ["background"] + [f"background-{i}" for i in range(2, len(BG_OFFSETS) + 1)]
TARGET_P99_MS = 10.0
OTHERS_LIMIT = 0.05
LUA = os.path.join(HERE, "serve_wrk.lua")
HZ = os.sysconf("SC_CLK_TCK")
SERVERS = ("ours", "nginx", "python")
FORMATS = ("csv", "json")


def log(msg):
    print(f"[serve_bench] {msg}", file=sys.stderr, flush=True)


def run(cmd, **kw):
    return subprocess.run(cmd, capture_output=True, text=True, **kw)


# ---------------------------------------------------------------------------------------
# HTTP with the standard library.

def request(port, method, path, body=None, token=None, timeout=30, extra_headers=None):
    """One request on a fresh connection: (status, headers, body bytes, seconds)."""
    headers = dict(extra_headers or {})
    if token:
        headers["Authorization"] = f"Bearer {token}"
    if body is not None:
        headers["Content-Type"] = "application/json"
        body = json.dumps(body).encode() if not isinstance(body, bytes) else body
    elif method in ("POST", "PUT"):
        body = b""  # Content-Length: 0
    t0 = time.perf_counter()
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=timeout)
    try:
        conn.request(method, path, body=body, headers=headers)
        resp = conn.getresponse()
        data = resp.read()
    finally:
        conn.close()
    return resp.status, dict(resp.getheaders()), data, time.perf_counter() - t0


def api(port, method, path, body=None, token=None):
    status, _, data, _ = request(port, method, path, body, token)
    if status >= 300:
        raise RuntimeError(f"{method} {path}: {status} {data[:300]!r}")
    return json.loads(data)


# ---------------------------------------------------------------------------------------
# CPU accounting from /proc.

def proc_cpu():
    """pid -> (comm, ppid, cpu seconds) for every process."""
    out = {}
    for p in os.listdir("/proc"):
        if not p.isdigit():
            continue
        try:
            with open(f"/proc/{p}/stat") as f:
                s = f.read()
        except OSError:
            continue
        comm = s[s.index("(") + 1:s.rindex(")")]
        f = s.rsplit(")", 1)[1].split()
        out[int(p)] = (comm, int(f[1]), (int(f[11]) + int(f[12])) / HZ)
    return out


def machine_times():
    with open("/proc/stat") as f:
        v = [int(x) / HZ for x in f.readline().split()[1:9]]
    return dict(zip(("user", "nice", "system", "idle", "iowait", "irq", "softirq", "steal"), v))


def task_cpu(pid):
    """The threads of pid: (cpu seconds at nice 0, cpu seconds at nice > 0). The daemon's
    refresh thread and the OpenMP threads it starts run at nice +10; its request threads
    at 0."""
    normal = niced = 0.0
    try:
        tids = os.listdir(f"/proc/{pid}/task")
    except OSError:
        return 0.0, 0.0
    for tid in tids:
        try:
            with open(f"/proc/{pid}/task/{tid}/stat") as f:
                v = f.read().rsplit(")", 1)[1].split()
        except OSError:
            continue
        cpu = (int(v[11]) + int(v[12])) / HZ
        if int(v[16]) > 0:
            niced += cpu
        else:
            normal += cpu
    return normal, niced


class Watch:
    """Samples every process's CPU time every 0.5 s while a run goes on: compilers seen,
    and the CPU used by processes outside the run (ours = the given pids, their
    children, this script)."""

    def __init__(self, ours, daemon_pid):
        self.ours = set(ours) | {os.getpid()}
        self.daemon_pid = daemon_pid
        self.daemon0 = task_cpu(daemon_pid)
        self.start = proc_cpu()
        self.last = dict(self.start)
        self.compiler = False
        self.t0 = time.perf_counter()
        self.m0 = machine_times()
        self.stop_event = threading.Event()
        self.thread = threading.Thread(target=self.loop, daemon=True)
        self.thread.start()

    def loop(self):
        while not self.stop_event.wait(0.5):
            self.sample()

    def sample(self):
        now = proc_cpu()
        if any(c == "cc1plus" for c, _, _ in now.values()):
            self.compiler = True
        self.last.update(now)

    def finish(self, extra_ours=()):
        self.stop_event.set()
        self.thread.join()
        self.sample()
        elapsed = time.perf_counter() - self.t0
        m1 = machine_times()
        daemon1 = task_cpu(self.daemon_pid)
        ours = self.ours | set(extra_ours)
        ours |= {pid for pid, (_, ppid, _) in self.last.items() if ppid in ours}
        def delta(pid):
            return self.last[pid][2] - (self.start[pid][2] if pid in self.start else 0.0)
        others = sum(max(0.0, delta(pid)) for pid in self.last if pid not in ours)
        per = {pid: round(delta(pid), 3) for pid in ours if pid in self.last}
        ncpu = os.cpu_count() or 1
        busy = sum(m1[k] - self.m0[k] for k in ("user", "nice", "system", "irq", "softirq"))
        return {"elapsed": elapsed, "others_cpu_share": round(others / (elapsed * ncpu), 4),
                "steal_share": round((m1["steal"] - self.m0["steal"]) / (elapsed * ncpu), 4),
                "machine_busy_share": round(busy / (elapsed * ncpu), 4),
                "softirq_share": round((m1["softirq"] - self.m0["softirq"]) / (elapsed * ncpu), 4),
                "compiler_seen": self.compiler, "cpu_by_pid": per,
                "daemon_request_threads_cpu_seconds": round(daemon1[0] - self.daemon0[0], 3),
                "daemon_refresh_threads_cpu_seconds": round(daemon1[1] - self.daemon0[1], 3)}


# ---------------------------------------------------------------------------------------
# The servers.

def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def wait_http(port, path, deadline_s=30):
    end = time.monotonic() + deadline_s
    while time.monotonic() < end:
        try:
            if request(port, "GET", path, timeout=2)[0] == 200:
                return True
        except OSError:
            pass
        time.sleep(0.1)
    return False


class Daemon:
    def __init__(self, fw, data, tmp, env=None, tag=""):
        self.out_path, self.err_path = os.path.join(tmp, f"serve{tag}.out"), os.path.join(tmp, f"serve{tag}.err")
        self.out, self.err = open(self.out_path, "w"), open(self.err_path, "w")
        t0 = time.perf_counter()
        self.proc = subprocess.Popen([fw, "--data", data, "serve", "--port", "0"], stdout=self.out, stderr=self.err,
                                     stdin=subprocess.DEVNULL, env=env)
        self.port = None
        while self.port is None and time.perf_counter() - t0 < 30:
            with open(self.out_path) as f:
                m = re.search(r"listening on http://127\.0\.0\.1:(\d+)", f.read())
            if m:
                self.port = int(m.group(1))
            elif self.proc.poll() is not None:
                break
            else:
                time.sleep(0.05)
        if self.port is None:
            sys.exit(f"the daemon did not start:\n{open(self.err_path).read()[-2000:]}")
        if not wait_http(self.port, "/v1/health"):
            sys.exit("GET /v1/health never answered 200")
        self.ready_seconds = time.perf_counter() - t0
        self.pid = self.proc.pid

    def memory(self):
        out = {}
        with open(f"/proc/{self.pid}/status") as f:
            for line in f:
                if line.startswith(("VmRSS", "VmHWM", "Threads")):
                    k, v = line.split(":", 1)
                    out[k] = int(v.split()[0]) * (1024 if "kB" in v else 1)
        return out

    def request_ms(self, offset):
        """The daemon's own time for the exposures requests logged since offset (from
        routing to the response written): count, p50, p99, max."""
        with open(self.err_path) as f:
            f.seek(offset)
            ms = sorted(float(m.group(1)) for m in re.finditer(r" GET /v1/models/wide/exposures 200 ([\d.]+) ms",
                                                               f.read()))
        if not ms:
            return {}
        pick = lambda q: ms[min(len(ms) - 1, int(q * len(ms)))]  # noqa: E731
        return {"daemon_log_requests": len(ms), "daemon_log_p50_ms": pick(0.5), "daemon_log_p99_ms": pick(0.99),
                "daemon_log_max_ms": ms[-1]}

    def log_lines(self, pattern):
        with open(self.err_path) as f:
            return [l for l in f if pattern in l]


class Nginx:
    def __init__(self, www, tmp):
        self.dir = os.path.join(tmp, "nginx")
        os.makedirs(os.path.join(self.dir, "temp"), exist_ok=True)
        self.port = free_port()
        conf = os.path.join(self.dir, "nginx.conf")
        d = self.dir
        with open(conf, "w") as f:
            f.write(f"""daemon off;
master_process on;
worker_processes 2;
pid {d}/nginx.pid;
error_log {d}/error.log;
events {{ worker_connections 256; }}
http {{
  access_log {d}/access.log;
  client_body_temp_path {d}/temp; proxy_temp_path {d}/temp; fastcgi_temp_path {d}/temp;
  uwsgi_temp_path {d}/temp; scgi_temp_path {d}/temp;
  sendfile on;
  gzip_static on;
  tcp_nopush on;
  keepalive_requests 1000;
  keepalive_timeout 5s;
  types {{ text/csv csv; application/json json; }}
  server {{ listen 127.0.0.1:{self.port}; root {www}; }}
}}
""")
        self.proc = subprocess.Popen(["nginx", "-c", conf, "-p", self.dir], stdout=subprocess.DEVNULL,
                                     stderr=open(os.path.join(self.dir, "stderr"), "w"))
        if not wait_http(self.port, "/exposures.csv"):
            self.stop()
            sys.exit(f"nginx did not start: {open(os.path.join(self.dir, 'error.log')).read()[-1000:]}")
        self.pid = self.proc.pid
        self.version = run(["nginx", "-v"]).stderr.strip()

    def stop(self):
        self.proc.send_signal(signal.SIGQUIT)  # graceful: the master stops its workers
        try:
            self.proc.wait(10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait()


class PythonPeer:
    def __init__(self, www, tmp):
        self.err = open(os.path.join(tmp, "python-peer.err"), "w")
        self.proc = subprocess.Popen([sys.executable, os.path.abspath(__file__), "static-peer", "--dir", www],
                                     stdout=subprocess.PIPE, stderr=self.err, text=True)
        self.port = int(self.proc.stdout.readline().strip())
        if not wait_http(self.port, "/exposures.csv"):
            sys.exit("the python peer did not start")
        self.pid = self.proc.pid
        self.version = f"Python {sys.version.split()[0]} http.server"

    def stop(self):
        self.proc.terminate()
        self.proc.wait(10)


def static_peer(args):
    from functools import partial
    from http.server import SimpleHTTPRequestHandler, ThreadingHTTPServer

    class Handler(SimpleHTTPRequestHandler):
        protocol_version = "HTTP/1.1"  # keep-alive, as wrk, nginx and our daemon use

    server = ThreadingHTTPServer(("127.0.0.1", args.port), partial(Handler, directory=args.dir))
    server.daemon_threads = True
    print(server.server_address[1], flush=True)
    signal.signal(signal.SIGTERM, lambda *_: sys.exit(0))
    server.serve_forever()


# An investigation, not a change to the daemon: the same binary with TCP_NODELAY set on
# every accepted socket by a preloaded library. cpp-httplib leaves Nagle's algorithm on
# (CPPHTTPLIB_TCP_NODELAY false); nginx sets TCP_NODELAY on keep-alive connections.
NODELAY_SHIM_C = r"""
#define _GNU_SOURCE
#include <dlfcn.h>
#include <netinet/in.h>
#include <netinet/tcp.h>
#include <stdio.h>
#include <sys/socket.h>
static void nodelay(int fd) {
  static int said;
  int one = 1;
  if (fd >= 0 && setsockopt(fd, IPPROTO_TCP, TCP_NODELAY, &one, sizeof one) == 0 && !said) {
    said = 1;
    fprintf(stderr, "serve_bench nodelay shim: TCP_NODELAY set on accepted sockets\n");
  }
}
int accept(int s, struct sockaddr *a, socklen_t *l) {
  static int (*real)(int, struct sockaddr *, socklen_t *);
  if (!real) real = dlsym(RTLD_NEXT, "accept");
  int fd = real(s, a, l);
  nodelay(fd);
  return fd;
}
int accept4(int s, struct sockaddr *a, socklen_t *l, int flags) {
  static int (*real)(int, struct sockaddr *, socklen_t *, int);
  if (!real) real = dlsym(RTLD_NEXT, "accept4");
  int fd = real(s, a, l, flags);
  nodelay(fd);
  return fd;
}
"""


def build_shim(build_dir):
    src, lib = os.path.join(build_dir, "serve_bench_nodelay.c"), os.path.join(build_dir, "serve_bench_nodelay.so")
    with open(src, "w") as f:
        f.write(NODELAY_SHIM_C)
    r = run(["cc", "-O2", "-shared", "-fPIC", "-o", lib, src, "-ldl"])
    if r.returncode != 0:
        log(f"the TCP_NODELAY shim did not compile; skipping that check:\n{r.stderr[-1000:]}")
        return None
    return lib


# ---------------------------------------------------------------------------------------
# The refresh that runs during the load.

class Refresh:
    def __init__(self, port, token):
        self.port, self.token = port, token
        self.bumps = 0
        self.jobs = []

    def arm(self, n):
        """Gives the first n background models a new version and queues their refreshes;
        returns once the first job is fitting."""
        self.jobs = []
        for name in BG_NAMES[:n]:
            self.bumps += 1
            api(self.port, "PUT", f"/v1/models/{name}", {"min_coverage": round(0.8 - 1e-4 * self.bumps, 6)},
                self.token)
            job = api(self.port, "POST", f"/v1/models/{name}/refresh", token=self.token)
            self.jobs.append(job["id"])
        end = time.monotonic() + 60
        while time.monotonic() < end:
            j = api(self.port, "GET", f"/v1/jobs/{self.jobs[0]}")
            if j["state"] == "running" and j["progress"]["total"] > 0:
                return
            if j["state"] not in ("queued", "running"):
                raise RuntimeError(f"refresh job {j['id']} ended before the load started: {j['state']} {j.get('error')}")
            time.sleep(0.05)
        raise RuntimeError("the refresh did not start within 60 s")

    def states(self):
        out = []
        for jid in self.jobs:
            j = api(self.port, "GET", f"/v1/jobs/{jid}")
            out.append({"id": jid, "model": j["model"], "state": j["state"], "done": j["progress"]["done"],
                        "total": j["progress"]["total"]})
        return out

    def wait_done(self, limit=600):
        end = time.monotonic() + limit
        while self.jobs and time.monotonic() < end:
            s = self.states()
            if all(x["state"] not in ("queued", "running") for x in s):
                failed = [x for x in s if x["state"] != "finished"]
                if failed:
                    log(f"warning: refresh jobs ended as {failed}")
                return s
            time.sleep(0.25)
        raise RuntimeError("the refresh jobs did not finish")


def refresh_running_throughout(before, after):
    started = bool(before) and before[0]["state"] == "running"
    still = any(x["state"] in ("running", "queued") for x in after)
    return started and still


# ---------------------------------------------------------------------------------------
# One load run.

def wrk_once(url, duration, connections, threads, headers=()):
    cmd = ["wrk", f"-t{threads}", f"-c{connections}", f"-d{duration}s", "--latency", "-s", LUA,
           *[x for h in headers for x in ("-H", h)], url]
    with tempfile.TemporaryFile("w+") as out:
        p = subprocess.Popen(cmd, stdout=out, stderr=subprocess.STDOUT)
        _, status, usage = os.wait4(p.pid, 0)
        out.seek(0)
        text = out.read()
    m = re.search(r"^WRKJSON (\{.*\})$", text, re.M)
    if os.waitstatus_to_exitcode(status) != 0 or not m:
        raise RuntimeError(f"wrk failed: {' '.join(cmd)}\n{text[-2000:]}")
    r = json.loads(m.group(1))
    r["wrk_cpu_seconds"] = usage.ru_utime + usage.ru_stime
    r["wrk_pid"] = p.pid
    r["wrk_text"] = text
    return r


def load_run(ctx, server, fmt, rnd, phase, refresh=True, threads=2, tries=4, connections=None, headers=(),
             extra=None):
    import quiet_run as q
    url = ctx["urls"][server][fmt]
    key = (server, fmt)
    connections = connections or ctx["connections"]
    # the python peer leaves the refresh most CPU: it needs the most jobs
    n = ctx["jobs_per_run"].get(key, 6 if server == "python" else 3)
    for attempt in range(1, tries + 1):
        q.wait_quiet(1800)
        before = after = []
        if refresh:
            ctx["refresh"].arm(n)
            before = ctx["refresh"].states()
        log_offset = os.path.getsize(ctx["daemon"].err_path)
        watch = Watch([ctx["daemon"].pid, ctx["servers_pids"][server]], ctx["daemon"].pid)
        r = wrk_once(url, ctx["duration"], connections, threads, headers)
        w = watch.finish(extra_ours=[r["wrk_pid"]])
        server_log = ctx["daemon"].request_ms(log_offset) if server == "ours" else {}
        if refresh:
            after = ctx["refresh"].states()
            ctx["refresh"].wait_done()
        running = refresh_running_throughout(before, after) if refresh else None
        disturbed = w["compiler_seen"] or w["others_cpu_share"] > OTHERS_LIMIT
        errors = r["errors_connect"] + r["errors_read"] + r["errors_write"] + r["errors_timeout"] + r["errors_status"]
        rec = {"bench": "load", "phase": phase, "server": server, "format": fmt, "round": rnd, "url": url,
               "wrk_threads": threads, "connections": connections, "duration_s": ctx["duration"],
               "request_headers": list(headers),
               "refresh": refresh, "jobs_queued": n if refresh else 0, "refresh_before": before,
               "refresh_after": after, "refresh_running_throughout": running,
               "refresh_windows_during_run": (sum(a["done"] for a in after) - sum(b["done"] for b in before))
               if refresh else None,
               "errors": errors, "requests_per_s": r["requests"] / (r["duration_us"] / 1e6),
               "mb_per_s": r["bytes"] / (r["duration_us"] / 1e6) / 1e6,
               "bytes_per_request": r["bytes"] / max(1, r["requests"]),
               "daemon_cpu_seconds": w["cpu_by_pid"].get(ctx["daemon"].pid),
               "server_cpu_seconds": (sum(v for pid, v in w["cpu_by_pid"].items()
                                          if pid not in (r["wrk_pid"], os.getpid(), ctx["daemon"].pid))
                                      if server != "ours" else w["daemon_request_threads_cpu_seconds"]),
               "tries": attempt, **server_log, **{k: v for k, v in r.items() if k not in ("wrk_text", "wrk_pid")},
               **{k: v for k, v in w.items() if k != "cpu_by_pid"}}
        if refresh and not running:
            log(f"{phase} {server} {fmt} round {rnd}: the refresh was not running throughout ({n} job(s): "
                f"{before[:1]} -> {after}); repeating with {min(2 * n, len(BG_NAMES))}")
            n = min(2 * n, len(BG_NAMES))
            ctx["jobs_per_run"][key] = n
            if attempt < tries:
                continue
        if disturbed and attempt < tries:
            log(f"{phase} {server} {fmt} round {rnd}: disturbed (compiler {w['compiler_seen']}, others "
                f"{w['others_cpu_share']:.1%}); repeating")
            continue
        break
    if refresh and running:
        # next time: jobs for 1.5 times the windows this kind of run fitted, and two more
        need = 1.5 * rec["refresh_windows_during_run"] / (DATES - WINDOW + 1)
        ctx["jobs_per_run"][key] = max(2, min(len(BG_NAMES), int(need) + 2))
    rec.update(extra or {})
    rec["contended"] = bool(disturbed)
    rec["counts"] = (not refresh or running) and not disturbed
    ctx["raw"].add(rec)
    log(f"{phase} round {rnd} {server:6s} {fmt:4s} t{threads}: p50 {r['p50_us'] / 1e3:.2f} ms, p99 "
        f"{r['p99_us'] / 1e3:.2f} ms, max {r['latency_max_us'] / 1e3:.1f} ms, {rec['requests_per_s']:.0f} req/s, "
        f"{rec['mb_per_s']:.0f} MB/s, errors {errors}, refresh "
        f"{'off' if not refresh else ('running throughout' if running else 'NOT running throughout')}"
        f"{' (' + str(rec['refresh_windows_during_run']) + ' windows fitted during the run)' if refresh else ''}, "
        f"wrk CPU {r['wrk_cpu_seconds']:.1f} s, others {w['others_cpu_share']:.1%}")
    return rec


# ---------------------------------------------------------------------------------------
# Setup.

def build(build_dir):
    from storage_bench import build as storage_build  # factorwatch and storage_data, Release, tests off
    storage_build(build_dir)


def machine_record(build_dir):
    cpu = next((l.split(":", 1)[1].strip() for l in run(["lscpu"]).stdout.splitlines()
                if l.startswith("Model name")), "?")
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    git = lambda *a: run(["git", "-C", ROOT, *a]).stdout.strip()  # noqa: E731
    dirty = git("status", "--porcelain", "--", "storage", "server", "engine")
    w = run(["wrk", "-v"]) if shutil.which("wrk") else None
    wrk_version = (w.stdout + w.stderr).splitlines()[0].split("Copyright")[0].strip() if w else "?"
    return {"bench": "machine", "cpu": cpu, "cpus": os.cpu_count(), "memory_gib": round(mem, 1),
            "compiler": (run(["c++", "--version"]).stdout.splitlines() or ["?"])[0], "build_type": "Release",
            "commit": git("rev-parse", "--short", "HEAD"),
            "sources": "storage/server/engine modified since the commit" if dirty else "as committed",
            "wrk": wrk_version, "kernel": os.uname().release,
            "binary_built": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime(
                os.path.getmtime(os.path.join(build_dir, "server", "factorwatch")))),
            "date": time.strftime("%Y-%m-%d %H:%M UTC", time.gmtime())}


class Raw:
    def __init__(self, path):
        self.f = open(path, "w")
        self.records = []

    def add(self, record):
        self.records.append(record)
        self.f.write(json.dumps(record) + "\n")
        self.f.flush()
        return record


def prepare_data(fw, gen, tmp, raw):
    csv_path = os.path.join(tmp, "returns.csv")
    g = json.loads(run([gen, "--assets", str(ASSETS), "--dates", str(DATES), "--out", csv_path], check=True).stdout)
    raw.add(g)
    data = os.path.join(tmp, "data")
    t0 = time.perf_counter()
    r = run([fw, "--data", data, "load", csv_path])
    if r.returncode != 0:
        sys.exit(f"load failed:\n{r.stderr}")
    load_s = time.perf_counter() - t0
    last = g["last_date"]
    m = run([fw, "--data", data, "model", "set", "wide", "--method", "pca", "--factors", str(FACTORS),
             "--window", str(WINDOW), "--first-as-of", last])
    if m.returncode != 0:
        sys.exit(f"model set wide failed:\n{m.stderr}")
    t0 = time.perf_counter()
    rw = run([fw, "--data", data, "refresh", "wide", "--quiet"])
    if rw.returncode != 0:
        sys.exit(f"refresh wide failed:\n{rw.stderr}")
    wide_s = time.perf_counter() - t0
    assets = []
    with open(csv_path) as f:
        next(f)
        for line in f:
            a = line.split(",", 2)[1]
            if assets and a == assets[0]:
                break
            assets.append(a)
    for name, offset in zip(BG_NAMES, BG_OFFSETS):
        uni = os.path.join(tmp, f"{name}.universe")
        with open(uni, "w") as f:
            f.write("\n".join(assets[offset:offset + BG_ASSETS]) + "\n")
        m = run([fw, "--data", data, "model", "set", name, "--universe", uni, "--method", "ml", "--factors",
                 str(FACTORS), "--window", str(WINDOW), "--step", "1"])
        if m.returncode != 0:
            sys.exit(f"model set {name} failed:\n{m.stderr}")
    raw.add({"bench": "setup", "load_seconds": load_s, "wide_refresh_seconds": wide_s,
             "wide_refresh": rw.stdout.strip().splitlines()[:2], "last_date": last, "assets": len(assets),
             "background_models": BG_NAMES, "background_assets": BG_ASSETS,
             "background_windows": DATES - WINDOW + 1})
    os.remove(csv_path)
    return data, last


def cold_requests(daemon, last, www, raw):
    """The first request of each format renders; a second key (as_of = the last date)
    renders again; then 20 requests in a row on fresh connections are served from the
    cache. Saves the bodies for the peers."""
    out = {"bench": "cold"}
    for fmt in FORMATS:
        path = f"/v1/models/wide/exposures?format={fmt}"
        status, headers, body, seconds = request(daemon.port, "GET", path)
        if status != 200:
            sys.exit(f"GET {path}: {status} {body[:300]!r}")
        s2, _, body2, seconds2 = request(daemon.port, "GET", f"{path}&as_of={last}")
        cached = [request(daemon.port, "GET", path)[3] for _ in range(20)]
        with open(os.path.join(www, f"exposures.{fmt}"), "wb") as f:
            f.write(body)
        os.chmod(os.path.join(www, f"exposures.{fmt}"), 0o644)
        # a client that accepts gzip: compressed on its first request, then cached
        gz = request(daemon.port, "GET", path, extra_headers={"Accept-Encoding": "gzip"})
        gz_cached = [request(daemon.port, "GET", path, extra_headers={"Accept-Encoding": "gzip"})[3]
                     for _ in range(5)]
        if gz[0] == 200 and gz[1].get("Content-Encoding") == "gzip":
            with open(os.path.join(www, f"exposures.{fmt}.gz"), "wb") as f:
                f.write(gz[2])
            os.chmod(os.path.join(www, f"exposures.{fmt}.gz"), 0o644)
            out.setdefault("gzip", {})[fmt] = {"bytes": len(gz[2]), "first_seconds": gz[3],
                                               "cached_median_seconds": statistics.median(gz_cached)}
        out[fmt] = {"first_seconds": seconds, "bytes": len(body), "content_type": headers.get("Content-Type"),
                    "again_other_key_seconds": seconds2, "again_identical": body2 == body,
                    "cached_median_seconds": statistics.median(cached), "cached_max_seconds": max(cached)}
    # the daemon logs a request after its response is written: the last line may lag
    end = time.monotonic() + 2
    while True:
        lines = daemon.log_lines("/v1/models/wide/exposures")
        ms = [float(m.group(1)) for l in lines if (m := re.search(r" 200 ([\d.]+) ms", l))]
        if len(ms) >= 56 or time.monotonic() > end:
            break
        time.sleep(0.05)
    if len(ms) >= 56:  # per format, in order: first, as_of, 20 cached, gzip first, 5 gzip cached
        for i, fmt in enumerate(FORMATS):
            v = ms[28 * i:28 * (i + 1)]
            out[fmt]["daemon_log_ms"] = {"first": v[0], "again": v[1], "cached_median": statistics.median(v[2:22])}
            if fmt in out.get("gzip", {}):
                out["gzip"][fmt]["daemon_log_ms"] = {"first": v[22], "cached_median": statistics.median(v[23:28])}
    return raw.add(out)


def shutdown_under_load(ctx, fw, data):
    """SIGTERM two seconds into a 6-second load with a refresh running."""
    d = ctx["daemon"]
    ctx["refresh"].arm(2)
    before = ctx["refresh"].states()
    result = {}

    def load():
        try:
            result["wrk"] = wrk_once(ctx["urls"]["ours"]["csv"], 6, ctx["connections"], 2)
        except Exception as e:  # noqa: BLE001
            result["wrk_error"] = str(e)[:500]

    t = threading.Thread(target=load)
    t.start()
    time.sleep(2.0)
    t0 = time.perf_counter()
    d.proc.send_signal(signal.SIGTERM)
    try:
        code = d.proc.wait(30)
    except subprocess.TimeoutExpired:
        code = None
    seconds = time.perf_counter() - t0
    t.join()
    if code is None:
        d.proc.kill()
        d.proc.wait()
    w = result.get("wrk", {})
    import sqlite3
    db = sqlite3.connect(os.path.join(data, "factorwatch.db"))
    integrity = db.execute("PRAGMA integrity_check").fetchone()[0]
    db.close()
    win = run([fw, "--data", data, "windows", "background"])
    tail = open(d.err_path).read().splitlines()[-3:]
    return ctx["raw"].add({
        "bench": "shutdown", "exit_code": code, "seconds_to_exit": seconds, "within_30s": code is not None,
        "refresh_before": before, "wrk_requests": w.get("requests"),
        "wrk_errors": {k: w.get(k) for k in ("errors_connect", "errors_read", "errors_write", "errors_timeout",
                                             "errors_status")},
        "wrk_error": result.get("wrk_error"), "integrity_check": integrity,
        "windows_command_exit": win.returncode, "daemon_log_tail": tail})


# ---------------------------------------------------------------------------------------
# The report.

def med(v):
    return statistics.median(v) if v else None


def rng(v, scale=1.0, fmt="{:.1f}"):
    return f"{fmt.format(min(v) * scale)}-{fmt.format(max(v) * scale)}" if len(v) > 1 else fmt.format(v[0] * scale)


def report(records):
    L = []
    say = L.append
    m = next((r for r in records if r.get("bench") == "machine"), {})
    say(f"Machine: {m.get('cpu')}, {m.get('cpus')} CPUs, {m.get('memory_gib')} GiB; kernel {m.get('kernel')}; "
        f"{m.get('compiler')}; {m.get('date')}")
    say(f"Source: commit {m.get('commit')}, {m.get('sources')} (the working tree when the run started); "
        f"Release build of {m.get('binary_built', '?')}")
    peers = next((r for r in records if r.get("bench") == "peers"), {})
    say(f"Load tool: {m.get('wrk')}; peers: {peers.get('nginx', 'nginx not run')}; {peers.get('python', '')}")
    s = next((r for r in records if r.get("bench") == "setup"), {})
    cold = next((r for r in records if r.get("bench") == "cold"), {})
    if s:
        say(f"Data: {ASSETS:,} assets x {DATES} dates loaded in {s['load_seconds']:.2f} s; model wide = PCA, "
            f"{FACTORS} factors, window {WINDOW}, one window as of {s['last_date']} (refresh {s['wide_refresh_seconds']:.2f} s)")
        say(f"Refresh during the load: models {', '.join(s['background_models'])}: {s['background_assets']:,} assets "
            f"each, ML, {FACTORS} factors, window {WINDOW}, step 1, {s['background_windows']} windows per job")
    loads = [r for r in records if r.get("bench") == "load"]
    if loads:
        say(f"Load during the runs: others at most {max(r['others_cpu_share'] for r in loads):.1%} of the CPUs, steal "
            f"at most {max(r['steal_share'] for r in loads):.1%}; {sum(1 for r in loads if r.get('tries', 1) > 1)} "
            f"run(s) repeated ({sum(r.get('tries', 1) - 1 for r in loads)} attempt(s) discarded); "
            f"{sum(1 for r in loads if not r['counts'])} kept although not counting (disturbed, or the refresh not "
            f"running throughout)")
    say("")
    if cold:
        say("FIRST REQUESTS (one client, a fresh connection each; the daemon's own log in brackets)")
        for fmt in FORMATS:
            c = cold.get(fmt)
            if not c:
                continue
            lg = {k: f"{v:.2f}" for k, v in c.get("daemon_log_ms", {}).items()}
            say(f"  {fmt.upper():4s} {c['bytes']:,} bytes: first (renders) {c['first_seconds'] * 1e3:.1f} ms "
                f"[{lg.get('first', '-')} ms]; another key for the same window (renders again) "
                f"{c['again_other_key_seconds'] * 1e3:.1f} ms [{lg.get('again', '-')} ms]; from the cache, median of 20 "
                f"{c['cached_median_seconds'] * 1e3:.2f} ms [{lg.get('cached_median', '-')} ms]"
                + ("" if c["again_identical"] else "; the second key's body DIFFERS"))
            g = cold.get("gzip", {}).get(fmt)
            if g:
                glg = {k: f"{v:.2f}" for k, v in g.get("daemon_log_ms", {}).items()}
                say(f"       gzip {g['bytes']:,} bytes ({g['bytes'] / c['bytes']:.0%}): first (compresses) "
                    f"{g['first_seconds'] * 1e3:.1f} ms [{glg.get('first', '-')} ms]; from the cache, median of 5 "
                    f"{g['cached_median_seconds'] * 1e3:.2f} ms [{glg.get('cached_median', '-')} ms]")
        say("")

    def rows(phase, threads=2):
        return [r for r in loads if r["phase"] == phase and r["wrk_threads"] == threads]

    def summary(rs, server, fmt):
        v = [r for r in rs if r["server"] == server and r["format"] == fmt and r["counts"]]
        if not v:
            return None
        get = lambda k: [r[k] for r in v]  # noqa: E731
        return {"n": len(v), "p50": get("p50_us"), "p90": get("p90_us"), "p99": get("p99_us"), "p999": get("p999_us"),
                "max": get("latency_max_us"), "rps": get("requests_per_s"), "mbs": get("mb_per_s"),
                "errors": sum(get("errors")), "running": all(r["refresh_running_throughout"] for r in v)
                if v[0]["refresh"] else None, "wrk_cpu": get("wrk_cpu_seconds"),
                "server_cpu": [x for x in get("server_cpu_seconds") if x is not None],
                "bg": [r["refresh_windows_during_run"] for r in v if r["refresh"]], "dur": get("duration_s"),
                "refresh_cpu": get("daemon_refresh_threads_cpu_seconds")}

    def table(phase, title, threads=2):
        rs = rows(phase, threads)
        if not rs:
            return {}
        say(title)
        say(f"  {'':4s} {'server':7s} {'p50':>6s} {'p90':>6s} {'p99 [range]':>19s} {'p99.9':>7s} {'max':>7s} "
            f"{'req/s':>6s} {'MB/s':>6s} {'err':>4s} {'wrk CPU':>8s} {'srv CPU':>8s} {'refr CPU':>8s}  refresh")
        out = {}
        for fmt in FORMATS:
            for server in SERVERS:
                x = summary(rs, server, fmt)
                if not x:
                    continue
                out[(server, fmt)] = x
                dur = med(x["dur"])
                refresh_txt = ("off" if x["running"] is None else
                               ("running throughout" if x["running"] else "NOT throughout")
                               + (f", {med(x['bg']):.0f} windows fitted during a run" if x["bg"] else ""))
                say(f"  {fmt.upper():4s} {server:7s} {med(x['p50']) / 1e3:6.2f} {med(x['p90']) / 1e3:6.2f} "
                    f"{med(x['p99']) / 1e3:6.2f} [{rng(x['p99'], 1e-3, '{:.1f}'):>10s}] {med(x['p999']) / 1e3:7.1f} "
                    f"{med(x['max']) / 1e3:7.1f} {med(x['rps']):6.0f} {med(x['mbs']):6.0f} {x['errors']:4d} "
                    f"{med(x['wrk_cpu']) / dur:7.0%}  {(med(x['server_cpu']) or 0) / dur:7.0%}  "
                    f"{med(x['refresh_cpu']) / dur:7.0%}  {refresh_txt}")
        for fmt in FORMATS:
            v = [r for r in rs if r["server"] == "ours" and r["format"] == fmt and r["counts"]
                 and "daemon_log_p99_ms" in r]
            if v:
                say(f"  {fmt.upper():4s} ours, the daemon's own time per request (its log: routing to response "
                    f"written): p50 {med([r['daemon_log_p50_ms'] for r in v]):.2f}, p99 "
                    f"{med([r['daemon_log_p99_ms'] for r in v]):.2f}, max {med([r['daemon_log_max_ms'] for r in v]):.1f}")
        say(f"  (ms; medians over {max(x['n'] for x in out.values())} round(s); CPU as a share of one core, "
            f"of the {os.cpu_count()} the machine has: 'srv CPU' is the server's own (for ours, the daemon's request "
            f"threads), 'refr CPU' the daemon's refresh threads (nice +10))")
        say("")
        return out

    dur = loads[0]["duration_s"] if loads else 0
    conns = loads[0]["connections"] if loads else 0
    main = table("main", f"UNDER LOAD: wrk -t2 -c{conns}, {dur} s per run, while a refresh runs (ours and the peers "
                         f"alike)")
    table("no-refresh", "EXTRA: the same with no refresh running")
    table("wrk-t1", "EXTRA: ours with wrk -t1 (one client thread), refresh running", threads=1)
    table("gzip", "EXTRA: clients that accept gzip (wrk -H 'Accept-Encoding: gzip'; wrk does not decompress), "
                       "refresh running")
    over = [r for r in loads if r["phase"] == "over-threads"]
    table("over-threads", f"EXTRA: {over[0]['connections'] if over else '?'} connections, 8 more than the "
                                f"daemon's {over[0].get('daemon_threads', '?') if over else '?'} request threads, "
                                f"no refresh")
    table("c1", "EXTRA: one connection (wrk -t1 -c1), no refresh", threads=1)
    nd = next((r for r in records if r.get("bench") == "nodelay"), None)
    table("nodelay", "EXTRA: ours with TCP_NODELAY set on accepted sockets by a preloaded shim (same binary), "
                               "refresh running" + ("" if not nd or nd["shim_active"] else " -- SHIM NOT ACTIVE"))
    table("nodelay-c1", "EXTRA: the same shim, one connection (wrk -t1 -c1), no refresh", threads=1)

    if main:
        say(f"TARGET: p99 under {TARGET_P99_MS:.0f} ms at 8 concurrent clients, no errors, while a refresh runs")
        say(f"  {'':4s} {'ours p99':>16s} {'nginx p99':>10s} {'ratio':>6s} {'python p99':>11s} {'ratio':>6s} "
            f"{'req/s':>6s} {'MB/s':>6s} {'errors':>6s} {'refresh':>8s}  verdict")
        for fmt in FORMATS:
            o = main.get(("ours", fmt))
            if not o:
                continue
            ours = med(o["p99"])
            cells = []
            for peer in ("nginx", "python"):
                p = main.get((peer, fmt))
                cells.append((f"{med(p['p99']) / 1e3:.2f}", f"{med(p['p99']) / ours:.2f}") if p else ("-", "-"))
            ok = ours / 1e3 < TARGET_P99_MS and o["errors"] == 0 and o["running"]
            say(f"  {fmt.upper():4s} {ours / 1e3:6.2f} [{rng(o['p99'], 1e-3)}] {cells[0][0]:>10s} {cells[0][1]:>6s} "
                f"{cells[1][0]:>11s} {cells[1][1]:>6s} {med(o['rps']):6.0f} {med(o['mbs']):6.0f} {o['errors']:6d} "
                f"{'yes' if o['running'] else 'NO':>8s}  {'MET' if ok else 'MISSED'}")
        say("  (p99 in ms, median over rounds [range]; ratio = peer p99 / ours: above 1, ours is faster)")
        say("")

    mem = next((r for r in records if r.get("bench") == "memory"), None)
    if mem:
        say(f"MEMORY of the daemon: VmRSS {mem['before']['VmRSS'] / 2**20:.0f} MiB after the first requests, "
            f"{mem['after']['VmRSS'] / 2**20:.0f} MiB after the runs (peak VmHWM {mem['after']['VmHWM'] / 2**20:.0f} "
            f"MiB), {mem['after'].get('Threads')} threads")
    sd = next((r for r in records if r.get("bench") == "shutdown"), None)
    if sd:
        errs = sd.get("wrk_errors") or {}
        say(f"SHUTDOWN under load (SIGTERM 2 s into a 6 s wrk run, a refresh running): exit code {sd['exit_code']} after "
            f"{sd['seconds_to_exit']:.2f} s ({'within' if sd['within_30s'] else 'NOT within'} 30 s); wrk completed "
            f"{sd.get('wrk_requests')} requests, errors {', '.join(f'{k[7:]} {v}' for k, v in errs.items() if v)}; "
            f"integrity_check {sd['integrity_check']}; `factorwatch windows background` exit {sd['windows_command_exit']}")
    return "\n".join(L)


# ---------------------------------------------------------------------------------------

def main():
    if len(sys.argv) > 1 and sys.argv[1] == "static-peer":
        ap = argparse.ArgumentParser()
        ap.add_argument("mode")
        ap.add_argument("--dir", required=True)
        ap.add_argument("--port", type=int, default=0)
        static_peer(ap.parse_args())
        return
    if len(sys.argv) > 1 and sys.argv[1] == "report":
        with open(sys.argv[2]) as f:
            print(report([json.loads(l) for l in f if l.startswith("{")]))
        return

    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--rounds", type=int, default=3)
    ap.add_argument("--build", default=os.path.join(ROOT, "build-servebench"))
    ap.add_argument("--no-build", action="store_true", help="use the binaries already in --build")
    ap.add_argument("--out", help="results directory (default BUILD/results)")
    ap.add_argument("--duration", type=int, default=20, help="seconds per wrk run")
    ap.add_argument("--connections", type=int, default=8)
    ap.add_argument("--no-extras", action="store_true", help="skip the runs without refresh and with wrk -t1")
    ap.add_argument("--keep-data", action="store_true")
    a = ap.parse_args()

    if not shutil.which("wrk"):
        sys.exit("wrk is missing: apt-get install wrk")
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

    raw = Raw(os.path.join(out, "serve_raw.jsonl"))
    raw.add(machine_record(a.build))
    tmp = tempfile.mkdtemp(prefix="factorwatch-servebench.", dir="/tmp")
    daemon = nginx = python_peer = nodelay = None
    try:
        log("writing and loading the data")
        data, last = prepare_data(fw, gen, tmp, raw)
        daemon = Daemon(fw, data, tmp)
        token = run([fw, "--data", data, "token"]).stdout.split()[0]
        log(f"daemon on port {daemon.port} (ready after {daemon.ready_seconds:.2f} s)")
        www = os.path.join(tmp, "www")
        os.makedirs(www)
        # nginx's workers run as another user (www-data) when started as root
        os.chmod(tmp, 0o711)
        os.chmod(www, 0o755)
        cold_requests(daemon, last, www, raw)
        mem_before = daemon.memory()
        python_peer = PythonPeer(www, tmp)
        peers = {"bench": "peers", "python": python_peer.version}
        urls = {"ours": {f: f"http://127.0.0.1:{daemon.port}/v1/models/wide/exposures?format={f}" for f in FORMATS},
                "python": {f: f"http://127.0.0.1:{python_peer.port}/exposures.{f}" for f in FORMATS}}
        pids = {"ours": daemon.pid, "python": python_peer.pid}
        if shutil.which("nginx"):
            nginx = Nginx(www, tmp)
            peers["nginx"] = nginx.version
            urls["nginx"] = {f: f"http://127.0.0.1:{nginx.port}/exposures.{f}" for f in FORMATS}
            pids["nginx"] = nginx.pid
        else:
            log("nginx is missing (apt-get install nginx-light): only the python peer runs")
        gzip_ok = all(os.path.exists(os.path.join(www, f"exposures.{f}.gz")) for f in FORMATS)
        for server, u in urls.items():  # every server hands out the same bytes
            for fmt in FORMATS:
                port, path = int(u[fmt].split(":")[2].split("/")[0]), "/" + u[fmt].split("/", 3)[3]
                with open(os.path.join(www, f"exposures.{fmt}"), "rb") as f:
                    if request(port, "GET", path)[2] != f.read():
                        sys.exit(f"{server} {fmt}: the body differs from ours")
                if gzip_ok and server in ("ours", "nginx"):
                    with open(os.path.join(www, f"exposures.{fmt}.gz"), "rb") as f:
                        if request(port, "GET", path, extra_headers={"Accept-Encoding": "gzip"})[2] != f.read():
                            sys.exit(f"{server} {fmt}: the gzip body differs from ours")
        raw.add(peers)
        servers = [s for s in SERVERS if s in urls]
        ctx = {"daemon": daemon, "refresh": Refresh(daemon.port, token), "urls": urls, "servers_pids": pids,
               "duration": a.duration, "connections": a.connections, "jobs_per_run": {}, "raw": raw}
        for rnd in range(1, a.rounds + 1):
            order = servers if rnd % 2 else list(reversed(servers))
            for server in order:
                for fmt in FORMATS:
                    load_run(ctx, server, fmt, rnd, "main")
        if not a.no_extras:
            for server in servers:
                for fmt in FORMATS:
                    load_run(ctx, server, fmt, 1, "no-refresh", refresh=False)
            for fmt in FORMATS:
                load_run(ctx, "ours", fmt, 1, "wrk-t1", threads=1)
        if not a.no_extras and gzip_ok:
            # clients that accept gzip (the daemon compresses a window once and caches it;
            # nginx serves the daemon's own .gz files with gzip_static)
            for server in [x for x in ("ours", "nginx") if x in urls]:
                for fmt in FORMATS:
                    load_run(ctx, server, fmt, 1, "gzip", headers=["Accept-Encoding: gzip"])
        if not a.no_extras:
            # beyond the daemon's request threads (each kept-alive connection holds one)
            m = re.search(r"--threads INT=(\d+)", run([fw, "serve", "--help"]).stdout)
            if m:
                threads = int(m.group(1))
                for server in [x for x in ("ours", "nginx") if x in urls]:
                    load_run(ctx, server, "csv", 1, "over-threads", refresh=False, connections=threads + 8,
                             extra={"daemon_threads": threads})
            # one client: no queueing, what is left is the path itself
            for server in servers:
                load_run(ctx, server, "csv", 1, "c1", refresh=False, threads=1, connections=1)
        raw.add({"bench": "memory", "before": mem_before, "after": daemon.memory()})
        log("SIGTERM under load")
        shutdown_under_load(ctx, fw, data)
        shim = None if a.no_extras else build_shim(a.build)
        if shim:
            log("the same daemon with TCP_NODELAY on its sockets (LD_PRELOAD shim)")
            nodelay = Daemon(fw, data, tmp, env={**os.environ, "LD_PRELOAD": shim}, tag="-nodelay")
            for fmt in FORMATS:
                body = request(nodelay.port, "GET", f"/v1/models/wide/exposures?format={fmt}")[2]
                with open(os.path.join(www, f"exposures.{fmt}"), "rb") as f:
                    if body != f.read():
                        sys.exit(f"nodelay daemon, {fmt}: the body differs from the first daemon's")
            marked = bool(nodelay.log_lines("serve_bench nodelay shim"))
            ctx2 = dict(ctx, daemon=nodelay, refresh=Refresh(nodelay.port, token),
                        urls=dict(urls, ours={f: f"http://127.0.0.1:{nodelay.port}/v1/models/wide/exposures?format={f}"
                                              for f in FORMATS}),
                        servers_pids=dict(pids, ours=nodelay.pid), jobs_per_run={})
            ctx2["refresh"].bumps = ctx["refresh"].bumps
            for rnd in range(1, a.rounds + 1):
                for fmt in FORMATS:
                    load_run(ctx2, "ours", fmt, rnd, "nodelay")
            load_run(ctx2, "ours", "csv", 1, "nodelay-c1", refresh=False, threads=1, connections=1)
            nodelay.proc.send_signal(signal.SIGTERM)
            raw.add({"bench": "nodelay", "shim_active": marked, "exit_code": nodelay.proc.wait(30)})
    finally:
        for p in (nginx, python_peer):
            if p:
                p.stop()
        for d in (daemon, nodelay):
            if d and d.proc.poll() is None:
                d.proc.send_signal(signal.SIGTERM)
                d.proc.wait(30)
        if daemon:  # the daemon's log without the load's request lines, and their count
            n = 0
            with open(daemon.err_path) as src, open(os.path.join(out, "serve_daemon.log"), "w") as dst:
                for line in src:
                    if re.search(r" GET /v1/models/wide/exposures 200 [\d.]+ ms$", line):
                        n += 1
                    else:
                        dst.write(line)
                dst.write(f"({n} lines 'GET /v1/models/wide/exposures 200' left out)\n")
        if a.keep_data:
            log(f"data kept in {tmp}")
        else:
            shutil.rmtree(tmp, ignore_errors=True)

    text = report(raw.records)
    with open(os.path.join(out, "serve_bench.txt"), "w") as f:
        f.write(text + "\n")
    print(text)
    log(f"raw lines: {raw.f.name}; report: {os.path.join(out, 'serve_bench.txt')}")


if __name__ == "__main__":
    main()
