#!/usr/bin/env python3
"""Upload returns to a running `factorwatch serve`, refresh a model and print its exposures.

Standard library only. Example:

    python3 docs/examples/refresh_and_show.py --file returns.csv --model demo --limit 10

Exit status: 0 done; 1 the refresh job did not finish; 2 an HTTP or connection error.
"""
import argparse
import csv
import io
import json
import os
import subprocess
import sys
import time
import urllib.error
import urllib.parse
import urllib.request


class Client:
    def __init__(self, url, token):
        self.url = url.rstrip("/")
        self.token = token

    def request(self, method, path, query=None, body=None, content_type=None, length=None):
        """Returns (status, headers, body bytes); raises urllib.error.HTTPError on 4xx/5xx."""
        url = self.url + path + ("?" + urllib.parse.urlencode(query) if query else "")
        req = urllib.request.Request(url, data=body, method=method)
        # Sent on reads too: harmless on loopback, needed with --reads-need-token.
        req.add_header("Authorization", "Bearer " + self.token)
        if content_type:
            req.add_header("Content-Type", content_type)
        if length is not None:
            # With a file object as body, urllib needs the length to avoid chunked encoding.
            req.add_header("Content-Length", str(length))
        with urllib.request.urlopen(req, timeout=60) as response:
            return response.status, response.headers, response.read()

    def json(self, method, path, query=None, document=None):
        body = json.dumps(document).encode() if document is not None else None
        _, _, data = self.request(method, path, query, body, "application/json" if body else None)
        return json.loads(data)


def read_token(args):
    if args.token:
        return args.token
    if args.token_file:
        with open(args.token_file, encoding="utf-8") as f:
            return f.read().strip()
    if os.environ.get("FACTORWATCH_TOKEN"):
        return os.environ["FACTORWATCH_TOKEN"]
    # Same data directory as the daemon is assumed (FACTORWATCH_DATA or the default):
    # its token file when readable, else ask the command.
    data = os.environ.get("FACTORWATCH_DATA") or os.path.join(
        os.environ.get("XDG_DATA_HOME") or os.path.expanduser("~/.local/share"), "factorwatch")
    path = os.path.join(data, "access-token")
    if os.path.exists(path):
        with open(path, encoding="utf-8") as f:
            return f.read().strip()
    return subprocess.run(["factorwatch", "token"], check=True, capture_output=True, text=True).stdout.strip()


def wait_until_ready(client, seconds=30):
    deadline = time.monotonic() + seconds
    while True:
        try:
            if client.json("GET", "/v1/health").get("status") == "ready":
                return True
        except (urllib.error.URLError, ConnectionError):
            pass  # not listening yet, or 503 while the database is opened and migrated
        if time.monotonic() > deadline:
            return False
        time.sleep(0.5)


def upload(client, path, prices):
    query = {"file": os.path.basename(path)}
    if prices:
        query["prices"] = "true"
    with open(path, "rb") as f:  # streamed, not read into memory
        _, _, data = client.request("POST", "/v1/returns", query, f, "text/csv", os.path.getsize(path))
    s = json.loads(data)
    print(f"{s['file']}: {s['outcome']}, {s['first_date']} .. {s['last_date']}, "
          f"{s['values_new']} new, {s['values_corrected']} corrected, "
          f"{s['windows_marked_stale']} windows marked stale")


def refresh(client, model):
    job = client.json("POST", f"/v1/models/{model}/refresh")
    tty = sys.stdout.isatty()  # rewrite one line on a terminal, a line per change in a log
    shown = None
    while job["state"] in ("queued", "running"):
        p = job["progress"]
        line = f"refresh {model}: {job['state']}, {p['done']}/{p['total']} windows"
        if line != shown:
            print(("\r" + line) if tty else line, end="" if tty else "\n", flush=True)
            shown = line
        time.sleep(0.5)
        job = client.json("GET", f"/v1/jobs/{job['id']}")
    print(("\r" if tty else "") + f"refresh {model}: {job['state']}" + (" " * 30 if tty else ""))
    if job["summary"] and job["summary"].get("note"):
        print("  " + job["summary"]["note"])
    if job["error"]:
        print("  " + job["error"], file=sys.stderr)
    return job["state"] == "finished"


def fixed(text):
    return f"{float(text):+.5f}"


def tiny(text):
    """Variances of daily returns are around 1e-4: e-notation keeps their digits."""
    return f"{float(text):.3e}"


def show_exposures(client, model, assets, limit):
    query = {"format": "csv"}
    if assets:
        query["assets"] = assets
    _, headers, data = client.request("GET", f"/v1/models/{model}/exposures", query)
    lines = data.decode("utf-8").splitlines()
    caution = headers.get("Factorwatch-Caution")
    for line in lines:
        if line.startswith("# caution: "):
            caution = caution or line[len("# caution: "):]
        elif line.startswith("#"):
            print(line[1:].strip())  # which window the numbers come from
    rows = list(csv.reader(io.StringIO("\n".join(line for line in lines if not line.startswith("#")))))
    header, rows = rows[0], rows[1:]
    factors = [h for h in header if h.startswith("f") and h[1:].isdigit()]
    col = {h: i for i, h in enumerate(header)}
    titles = ["asset", *factors, "communality", "specific variance", "uniqueness"]
    table = [titles]
    for r in rows[:limit] if limit > 0 else rows:
        table.append([r[col["asset"]], *(fixed(r[col[f]]) for f in factors),
                      tiny(r[col["communality"]]), tiny(r[col["specific_variance"]]),
                      f"{float(r[col['uniqueness']]):.3f}" + (" (Heywood)" if r[col["heywood"]] == "true" else "")])
    widths = [max(len(row[i]) for row in table) for i in range(len(titles))]
    print()
    for row in table:
        print(row[0].ljust(widths[0]) + "".join("  " + c.rjust(w) for c, w in zip(row[1:], widths[1:])))
    if len(table) - 1 < len(rows):
        print(f"... {len(rows) - (len(table) - 1)} more (--limit 0 shows all)")
    # CSV has rows only for fitted assets; the JSON form gives the reason for the others.
    fitted = {r[col["asset"]] for r in rows}
    for asset in (assets.split(",") if assets else []):
        if asset not in fitted:
            print(f"{asset}: not in this window")
    print(f"\nCaution: {caution}")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--url", default="http://127.0.0.1:8750")
    parser.add_argument("--token", help="default: $FACTORWATCH_TOKEN, else the data directory's access-token file, else `factorwatch token`")
    parser.add_argument("--token-file", help="file holding the token, e.g. DATA/access-token")
    parser.add_argument("--model", default="demo")
    parser.add_argument("--file", help="returns CSV to upload first (skipped when absent)")
    parser.add_argument("--prices", action="store_true", help="the file holds prices, not returns")
    parser.add_argument("--factors", type=int, help="set the model's factors before refreshing")
    parser.add_argument("--window", type=int, help="set the model's window (dates) before refreshing")
    parser.add_argument("--assets", help="comma-separated assets to show (default all)")
    parser.add_argument("--limit", type=int, default=15, help="rows to print; 0 prints all")
    args = parser.parse_args()

    try:
        client = Client(args.url, read_token(args))
    except (OSError, subprocess.CalledProcessError) as e:
        print(f"no token: {e}; pass --token or --token-file", file=sys.stderr)
        return 2
    try:
        if not wait_until_ready(client):
            print(f"factorwatch at {args.url} not ready after 30 s", file=sys.stderr)
            return 2
        if args.file:
            upload(client, args.file, args.prices)
        definition = {k: v for k, v in (("factors", args.factors), ("window", args.window)) if v is not None}
        if definition:
            m = client.json("PUT", f"/v1/models/{args.model}", document=definition)
            print(f"model {m['model']}: version {m['version']}" + (" (new)" if m["new_version"] else ""))
        if not refresh(client, args.model):
            return 1
        show_exposures(client, args.model, args.assets, args.limit)
    except urllib.error.HTTPError as e:
        try:
            problem = json.loads(e.read())  # application/problem+json
            print(f"HTTP {problem['status']}: {problem['detail']}", file=sys.stderr)
        except (ValueError, KeyError):
            print(f"HTTP {e.code}: {e.reason}", file=sys.stderr)
        return 2
    except urllib.error.URLError as e:
        print(f"cannot reach {args.url}: {e.reason}", file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main())
