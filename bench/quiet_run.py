#!/usr/bin/python3
"""Runs one benchmark command when the machine is quiet and checks it stayed quiet.

    /usr/bin/python3 bench/quiet_run.py [--tries 5] [--max-wait 1800] [--tag K=V] -- CMD ARGS...

Other engineers compile and test on this machine, so before the command starts it waits
until no compiler (cc1plus) runs and the CPUs are at least 90% idle over one second.
While the command runs it samples the compilers and the machine's CPU time (/proc/stat);
afterwards it subtracts the command's own CPU time (rusage, all its threads). If a
compiler appeared, or other processes used more than 5% of the machine, the run is
repeated (up to --tries times; the last one is kept and marked "contended").

The command's JSON lines are printed with three fields added: "others_cpu_share" (CPU
used by other processes, share of all CPUs), "steal_share" (time the hypervisor gave
to other guests, share of all CPUs) and "tries". Other lines pass through unchanged.
"""
import argparse
import json
import os
import subprocess
import sys
import tempfile
import time

HZ = os.sysconf("SC_CLK_TCK")
NCPU = os.cpu_count() or 1
OTHERS_LIMIT = 0.05


def cpu_times():
    with open("/proc/stat") as f:
        v = [int(x) for x in f.readline().split()[1:]]
    user, nice, system, idle, iowait, irq, softirq, steal = v[:8]
    return (user + nice + system + irq + softirq) / HZ, (idle + iowait) / HZ, steal / HZ


def compilers():
    return sum(1 for p in os.listdir("/proc") if p.isdigit() and _comm(p) == "cc1plus")


def _comm(pid):
    try:
        with open(f"/proc/{pid}/comm") as f:
            return f.read().strip()
    except OSError:
        return ""


def log(msg):
    print(f"[quiet_run] {msg}", file=sys.stderr, flush=True)


def wait_quiet(max_wait):
    start = time.monotonic()
    said = False
    while time.monotonic() - start < max_wait:
        if compilers() == 0:
            b0, i0, _ = cpu_times()
            time.sleep(1.0)
            b1, i1, _ = cpu_times()
            if (i1 - i0) >= 0.9 * ((b1 - b0) + (i1 - i0)) and compilers() == 0:
                return True
        else:
            time.sleep(2.0)
        if not said:
            log("waiting for the machine to be quiet (compilers or other load)")
            said = True
    log(f"still busy after {max_wait:.0f} s; running anyway")
    return False


def run_once(cmd):
    busy0, _, steal0 = cpu_times()
    t0 = time.monotonic()
    saw_compiler = False
    with tempfile.TemporaryFile(mode="w+") as out:
        child = subprocess.Popen(cmd, stdout=out)
        while True:
            pid, status_raw, usage = os.wait4(child.pid, os.WNOHANG)
            if pid:
                break
            if compilers():
                saw_compiler = True
            time.sleep(0.2)
        elapsed = time.monotonic() - t0
        busy1, _, steal1 = cpu_times()
        out.seek(0)
        text = out.read()
    child.returncode = os.waitstatus_to_exitcode(status_raw)
    child_cpu = usage.ru_utime + usage.ru_stime
    others = max(0.0, (busy1 - busy0) - child_cpu) / (elapsed * NCPU)
    steal = (steal1 - steal0) / (elapsed * NCPU)
    return text, child.returncode, saw_compiler, others, steal


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--tries", type=int, default=5)
    ap.add_argument("--max-wait", type=float, default=1800)
    ap.add_argument("--tag", action="append", default=[], help="key=value added to every JSON line")
    ap.add_argument("cmd", nargs=argparse.REMAINDER)
    a = ap.parse_args()
    cmd = a.cmd[1:] if a.cmd and a.cmd[0] == "--" else a.cmd
    if not cmd:
        sys.exit("quiet_run.py: no command")
    for attempt in range(1, a.tries + 1):
        wait_quiet(a.max_wait)
        text, status, saw_compiler, others, steal = run_once(cmd)
        clean = not saw_compiler and others <= OTHERS_LIMIT
        if status != 0:
            log(f"exit status {status} from {' '.join(cmd)}")
        if clean or attempt == a.tries:
            break
        log(f"attempt {attempt} disturbed (compiler: {saw_compiler}, others used {others:.1%} of the CPUs); repeating")
    for line in text.splitlines():
        if line.startswith("{"):
            try:
                record = json.loads(line)
            except json.JSONDecodeError:
                print(line)
                continue
            record.update({"others_cpu_share": round(others, 4), "steal_share": round(steal, 4), "tries": attempt})
            for tag in a.tag:
                key, _, value = tag.partition("=")
                record[key] = int(value) if value.isdigit() else value
            if not clean:
                record["contended"] = True
            print(json.dumps(record))
        else:
            print(line)
    sys.stdout.flush()
    return status


if __name__ == "__main__":
    sys.exit(main())
