#!/usr/bin/env python3
"""The workspace server's speed and memory, measured side by side in one run.

On an invented 40-student section (examples/make_class.rs, one sheet) in a fresh workspace it
measures, alternately, REPEATS times each:
  override   POST /api/overrides, then GET /api/results?revision=N until the updated records
             come back: what the page does after the form is sent (the issue's target: < 100 ms)
  remove     DELETE /api/overrides/{line}, then the same wait for the results
  cli        `benchgrade grade inputs ... --out graded-cli` run by hand in the workspace, for
             comparison: the run alone, with the process start a terminal user pays
and reads the server's resident memory (/proc/PID/status) when idle: just started, and after
the runs (target: < 30 MB). Standard library only; builds the release binary first.
The override and removal are also timed, alternately, on a second server that grades inside
its own process (BENCHGRADE_SERVE_IN_PROCESS=1) instead of in a child process: the difference
is what the child process costs.

    python3 bench/serve_latency.py [REPEATS]        (default 30)
    BENCHGRADE_BENCH_PROFILE=debug python3 bench/serve_latency.py 10   (the debug build)
"""

import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def build():
    debug = os.environ.get("BENCHGRADE_BENCH_PROFILE") == "debug"
    subprocess.run(
        ["cargo", "build", "--quiet", "--bin", "benchgrade", "--example", "make_class"]
        + ([] if debug else ["--release"]),
        cwd=ROOT,
        check=True,
    )
    target = os.environ.get("CARGO_TARGET_DIR", os.path.join(ROOT, "target"))
    return os.path.join(target, "debug" if debug else "release")


class Server:
    def __init__(self, binary, workspace, env=None):
        self.proc = subprocess.Popen(
            [binary, "serve", workspace, "--port", "0"],
            stdout=subprocess.PIPE,
            stderr=subprocess.DEVNULL,
            text=True,
            env={**os.environ, **(env or {})},
        )
        line = self.proc.stdout.readline().strip()
        url = line.removeprefix("benchgrade workspace at ")
        self.base, self.token = url.split("/?token=")

    def call(self, method, path, body=None, raw=None, content_type=None):
        data = raw if raw is not None else (json.dumps(body).encode() if body is not None else None)
        req = urllib.request.Request(self.base + path, data=data, method=method)
        req.add_header("Authorization", "Bearer " + self.token)
        if content_type or body is not None:
            req.add_header("Content-Type", content_type or "application/json")
        with urllib.request.urlopen(req, timeout=120) as r:
            return json.load(r)

    def rss_kib(self):
        fields = {}
        with open(f"/proc/{self.proc.pid}/status") as f:
            for line in f:
                k, _, v = line.partition(":")
                fields[k] = v.strip()
        return {k: int(fields[k].split()[0]) for k in ("VmRSS", "RssAnon", "RssFile") if k in fields}

    def stop(self):
        self.proc.kill()
        self.proc.wait()


def upload(server, path):
    boundary = "benchgrade-bench-51c2"
    name = os.path.basename(path)
    with open(path, "rb") as f:
        content = f.read()
    body = (
        f"--{boundary}\r\nContent-Disposition: form-data; name=\"file\"; filename=\"{name}\"\r\n"
        "Content-Type: application/octet-stream\r\n\r\n"
    ).encode() + content + f"\r\n--{boundary}--\r\n".encode()
    return server.call("POST", "/api/files", raw=body, content_type=f"multipart/form-data; boundary={boundary}")


def record(results, student):
    return next(r for r in results["records"] if r["student_id"] == student)


def timed_override(server, student, points):
    start = time.perf_counter()
    made = server.call("POST", "/api/overrides", {
        "student_id": student, "criterion": "total", "points": str(points),
        "reason": "benchmark", "grader": "bench",
    })
    results = server.call("GET", f"/api/results?revision={made['revision']}")
    elapsed = time.perf_counter() - start
    assert record(results, student)["score"] == points, "the override is in the results"
    return elapsed, made["line"]


def timed_remove(server, student, line, before):
    start = time.perf_counter()
    done = server.call("DELETE", f"/api/overrides/{line}")
    results = server.call("GET", f"/api/results?revision={done['revision']}")
    elapsed = time.perf_counter() - start
    assert record(results, student)["score"] == before, "the score is back"
    return elapsed


def timed_cli(binary, workspace):
    start = time.perf_counter()
    subprocess.run(
        [binary, "grade", "inputs", "--columns", "columns.toml", "--overrides", "overrides.csv",
         "--out", "graded-cli", "--quiet"],
        cwd=workspace, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    return time.perf_counter() - start


def summary(name, values):
    ms = sorted(v * 1000 for v in values)
    p90 = ms[min(len(ms) - 1, int(round(0.9 * (len(ms) - 1))))]
    print(f"{name:<44} median {statistics.median(ms):7.1f} ms   p90 {p90:7.1f} ms   "
          f"min {ms[0]:7.1f} ms   max {ms[-1]:7.1f} ms")
    return statistics.median(ms)


def main():
    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 30
    release = build()
    binary = os.path.join(release, "benchgrade")
    with tempfile.TemporaryDirectory() as work:
        section = os.path.join(work, "section-40.xlsx")
        subprocess.run([os.path.join(release, "examples", "make_class"), section, "40", "1"], check=True,
                       stdout=subprocess.DEVNULL)
        workspace = os.path.join(work, "ws")
        server = Server(binary, workspace)
        inside = Server(binary, os.path.join(work, "ws-in-process"), {"BENCHGRADE_SERVE_IN_PROCESS": "1"})
        try:
            time.sleep(2)
            idle_start = server.rss_kib()
            made = upload(server, section)
            results = server.call("GET", f"/api/results?revision={made['revision']}")
            graded = [r for r in results["records"] if r["score"] is not None]
            student = graded[0]["student_id"]
            before = graded[0]["score"]
            print(f"section: {len(results['records'])} students; one run took {results['millis']} ms "
                  "inside the server")
            inside.call("GET", f"/api/results?revision={upload(inside, section)['revision']}")
            over, remove, cli, over_in, remove_in = [], [], [], [], []
            for i in range(repeats):
                t, line = timed_override(server, student, 50 + i % 40)
                over.append(t)
                remove.append(timed_remove(server, student, line, before))
                t, line = timed_override(inside, student, 50 + i % 40)
                over_in.append(t)
                remove_in.append(timed_remove(inside, student, line, before))
                cli.append(timed_cli(binary, workspace))
            time.sleep(3)
            idle_after = server.rss_kib()
        finally:
            server.stop()
            inside.stop()
    print(f"({repeats} alternating repeats each)")
    m = summary("override posted -> updated results returned", over)
    summary("override removed -> updated results returned", remove)
    m_in = summary("the same, graded inside the server: override", over_in)
    summary("the same, graded inside the server: removed", remove_in)
    print(f"the child process costs {m - m_in:+.1f} ms a run (median against median)")
    summary("benchgrade grade by hand (process start included)", cli)
    for label, rss in (("idle, just started", idle_start), ("idle, after the runs", idle_after)):
        print(f"server memory, {label:<22} RSS {rss['VmRSS'] / 1024:5.1f} MiB "
              f"(heap and stacks {rss.get('RssAnon', 0) / 1024:.1f}, code and files {rss.get('RssFile', 0) / 1024:.1f})")
    print(f"targets: override -> results < 100 ms ({'met' if m < 100 else 'NOT met'}), "
          f"idle memory < 30 MB ({'met' if max(idle_start['VmRSS'], idle_after['VmRSS']) * 1024 < 30e6 else 'NOT met'})")


if __name__ == "__main__":
    main()
