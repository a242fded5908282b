#!/usr/bin/env python3
"""Summarize the runs of bench/run.sh as a Markdown report.

In: the work folder of bench/run.sh with, per size N and seed S, `run-N-sS/` holding
`samekey.time`, `duckdb.time` (GNU time -v output), `samekey.eval.json`,
`duckdb.eval.json` (`samekey evaluate --json`), `samekey.log` (the `link --timings`
summary), `duckdb.log.err` (the baseline's step times) and, when data was generated,
`synth.time`. Out: the report on stdout and in the --out file.

Usage: report.py --work DIR --sizes N[,N...] --seed S --threads T --out FILE
"""

import argparse
import datetime
import json
import os
import platform
import re
import subprocess
import sys


def fail(msg):
    print(f"report: error: {msg}", file=sys.stderr)
    sys.exit(1)


def read(path):
    try:
        with open(path, encoding="utf-8") as f:
            return f.read()
    except OSError as e:
        fail(f"cannot read {path}: {e.strerror}; did the step that writes it run?")


def parse_time(path):
    """Wall seconds, peak RSS in KiB, user and system seconds from GNU time -v output."""
    text = read(path)
    m = re.search(r"Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): ([0-9:.]+)", text)
    r = re.search(r"Maximum resident set size \(kbytes\): (\d+)", text)
    if not m or not r:
        fail(f"{path} is not GNU time -v output (no wall clock time or maximum RSS)")
    secs = 0.0
    for part in m.group(1).split(":"):
        secs = secs * 60 + float(part)
    pct = re.search(r"Percent of CPU this job got: (\d+)%", text)
    try:
        with open(path + ".load", encoding="utf-8") as f:
            load = f.read().split()[0]
    except (OSError, IndexError):
        load = "?"
    user = re.search(r"User time \(seconds\): ([0-9.]+)", text)
    system = re.search(r"System time \(seconds\): ([0-9.]+)", text)
    return {
        "wall": secs,
        "rss_kib": int(r.group(1)),
        "cpu": (float(user.group(1)) if user else 0.0)
        + (float(system.group(1)) if system else 0.0),
        "cpu_pct": int(pct.group(1)) if pct else None,
        "load": load,
    }


def parse_eval(path):
    text = read(path)
    try:
        j = json.loads(text)
        return {
            "records": j["records"],
            "true_entities": j["true_entities"],
            "predicted_entities": j["predicted_entities"],
            "pw": j["pairwise"],
            "b3": j["bcubed"],
        }
    except (ValueError, KeyError) as e:
        fail(f"{path} is not `samekey evaluate --json` output ({e})")


def parse_stage_lines(text, start_marker):
    """(name, seconds) lines `  name   1.234 s` after the line equal to start_marker."""
    out = []
    started = start_marker is None
    for line in text.splitlines():
        if not started:
            started = line.strip() == start_marker
            continue
        m = re.match(r"^  (\S.*?)\s+(-?[0-9.]+) s$", line)
        if m:
            out.append((m.group(1), float(m.group(2))))
        elif out and start_marker is not None:
            break
    return out


def samekey_info(path):
    text = read(path)
    info = {"stages": parse_stage_lines(text, "Timings")}
    m = re.search(r"candidate pairs: (\d+)", text)
    info["candidates"] = int(m.group(1)) if m else None
    m = re.search(r"match (\d+)\s+review (\d+)\s+non_match (\d+)", text)
    info["decisions"] = tuple(int(x) for x in m.groups()) if m else None
    # CPU lines of --timings: the whole run and standardizing values.
    run = re.search(r"^  run\s+([0-9.]+) s$", text, re.M)
    std = re.search(r"^  standardizing values\s+([0-9.]+) s", text, re.M)
    info["cpu"] = (float(run.group(1)), float(std.group(1))) if run and std else None
    return info


def duckdb_info(path):
    text = read(path)
    info = {"stages": parse_stage_lines(text, None)}
    m = re.search(r"matched pairs (\d+)", text)
    info["pairs"] = int(m.group(1)) if m else None
    m = re.search(r"^duckdb (\S+), threads", text, re.M)
    info["version"] = m.group(1).rstrip(",") if m else "?"
    return info


def largest_cluster(path):
    """Records in the largest cluster of a crosswalk CSV."""
    import collections
    import csv
    try:
        with open(path, newline="", encoding="utf-8") as f:
            sizes = collections.Counter(row["customer_key"] for row in csv.DictReader(f))
    except (OSError, KeyError) as e:
        fail(f"cannot read the crosswalk {path}: {e}")
    return max(sizes.values(), default=0)


def fmt_time(s):
    return f"{s:.1f} s" if s >= 10 else f"{s:.2f} s"


def fmt_rss(kib):
    mib = kib / 1024
    return f"{mib / 1024:.2f} GiB" if mib >= 1024 else f"{mib:.0f} MiB"


def machine():
    cpu = "unknown CPU"
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as f:
            for line in f:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    mem = ""
    try:
        with open("/proc/meminfo", encoding="utf-8") as f:
            kib = int(f.readline().split()[1])
            mem = f", {kib / 1024 / 1024:.0f} GiB RAM"
    except (OSError, ValueError, IndexError):
        pass
    return f"{cpu}, {os.cpu_count()} logical cores{mem}, {platform.system()} {platform.release()}"


def command_out(*cmd):
    try:
        return subprocess.run(cmd, capture_output=True, text=True, check=True).stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return "?"


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--work", required=True)
    ap.add_argument("--sizes", required=True)
    ap.add_argument("--seed", required=True)
    ap.add_argument("--threads", required=True)
    ap.add_argument("--out", required=True)
    args = ap.parse_args()

    rows = []
    for n in args.sizes.split(","):
        run = os.path.join(args.work, f"run-{n}-s{args.seed}")
        synth = os.path.join(run, "synth.time")
        rows.append({
            "n": int(n),
            "synth": parse_time(synth) if os.path.exists(synth) else None,
            "k_time": parse_time(os.path.join(run, "samekey.time")),
            "d_time": parse_time(os.path.join(run, "duckdb.time")),
            "k_eval": parse_eval(os.path.join(run, "samekey.eval.json")),
            "d_eval": parse_eval(os.path.join(run, "duckdb.eval.json")),
            "k_info": samekey_info(os.path.join(run, "samekey.log")),
            "d_info": duckdb_info(os.path.join(run, "duckdb.log.err")),
            "k_big": largest_cluster(os.path.join(run, "samekey", "crosswalk.csv")),
            "d_big": largest_cluster(os.path.join(run, "duckdb", "crosswalk.csv")),
        })

    commit = command_out("git", "rev-parse", "--short", "HEAD")
    if command_out("git", "status", "--porcelain", "--untracked-files=no") not in ("", "?"):
        commit += " (with uncommitted changes)"
    rustc = command_out("rustc", "--version")
    duck = rows[0]["d_info"]["version"] if rows else "?"
    today = datetime.date.today().isoformat()

    md = []
    md.append(f"# samekey and a plain-DuckDB baseline, {today}\n")
    md.append(
        f"`bench/run.sh --sizes {args.sizes} --seed {args.seed} --threads {args.threads}`; "
        f"samekey {commit}, {rustc}; DuckDB {duck} with {args.threads} threads; "
        f"{machine()}.\n"
    )
    md.append(
        "Data: invented customers from `samekey synth --customers N --seed S` (three "
        "sources: crm, webshop, support). Times are wall clock of the whole process and "
        "peak RSS from GNU `time -v`. samekey runs `link --pairs linked --timings` on the "
        "spec synth writes, fitting its model by EM in the same run; the baseline is "
        "`bench/duckdb_baseline.py` (SQL standardization, block on family-name prefix 3 + "
        "given initial, Jaro-Winkler rules, connected components). Both crosswalks are "
        "scored by `samekey evaluate` against the synth truth.\n"
    )
    md.append(
        "| customers | records | samekey time | samekey peak RSS | samekey pairwise F1 "
        "| samekey B-cubed F1 | DuckDB time | DuckDB peak RSS | DuckDB pairwise F1 "
        "| DuckDB B-cubed F1 | time DuckDB / samekey | CPU time DuckDB / samekey |"
    )
    md.append("|" + "---:|" * 12)
    for r in rows:
        k, d = r["k_time"], r["d_time"]
        ratio = d["wall"] / k["wall"] if k["wall"] > 0 else float("inf")
        cpu_ratio = d["cpu"] / k["cpu"] if k["cpu"] > 0 else float("inf")
        md.append(
            f"| {r['n']:,} | {r['k_eval']['records']:,} | {fmt_time(k['wall'])} "
            f"| {fmt_rss(k['rss_kib'])} | {r['k_eval']['pw']['f1']:.4f} "
            f"| {r['k_eval']['b3']['f1']:.4f} | {fmt_time(d['wall'])} "
            f"| {fmt_rss(d['rss_kib'])} | {r['d_eval']['pw']['f1']:.4f} "
            f"| {r['d_eval']['b3']['f1']:.4f} | {ratio:.2f}x | {cpu_ratio:.2f}x |"
        )
    md.append("")

    md.append(
        "CPU time is user + system time of the process. The machine is shared: when the "
        "load average before a step (below) is above the core count or the CPU % of a "
        "multi-threaded step is well below 100 % per thread, other work slowed it down and "
        "the CPU-time ratio is the fairer comparison.\n"
    )
    md.append("## Precision and recall\n")
    md.append(
        "| customers | tool | pairwise P | pairwise R | pairwise F1 | B-cubed P | B-cubed R "
        "| B-cubed F1 | customers found (true) | largest cluster | linked pairs | CPU time "
        "| CPU % | load before |"
    )
    md.append("|---:|---|" + "---:|" * 12)
    for r in rows:
        for tool, e, t, big in (("samekey", r["k_eval"], r["k_time"], r["k_big"]),
                                ("DuckDB", r["d_eval"], r["d_time"], r["d_big"])):
            pw, b3 = e["pw"], e["b3"]
            md.append(
                f"| {r['n']:,} | {tool} | {pw['precision']:.4f} | {pw['recall']:.4f} "
                f"| {pw['f1']:.4f} | {b3['precision']:.4f} | {b3['recall']:.4f} "
                f"| {b3['f1']:.4f} | {e['predicted_entities']:,} ({e['true_entities']:,}) "
                f"| {big:,} "
                f"| {pw['predicted_pairs']:,} | {fmt_time(t['cpu'])} "
                f"| {t['cpu_pct'] if t['cpu_pct'] is not None else '?'}% | {t['load']} |"
            )
    md.append("")

    md.append("## Where the time goes\n")
    for r in rows:
        ki, di = r["k_info"], r["d_info"]
        extra = []
        if ki["candidates"] is not None:
            extra.append(f"{ki['candidates']:,} candidate pairs")
        if ki["decisions"]:
            m, rv, nm = ki["decisions"]
            extra.append(f"match {m:,}, review {rv:,}, non-match {nm:,}")
        synth = f"; synth took {fmt_time(r['synth']['wall'])}" if r["synth"] else ""
        dpairs = f"{di['pairs']:,}" if di["pairs"] is not None else "?"
        cpu = ""
        if ki["cpu"]:
            run_cpu, std_cpu = ki["cpu"]
            cpu = (f"; samekey CPU time {run_cpu:.1f} s, of which standardizing values "
                   f"{std_cpu:.2f} s ({100 * std_cpu / run_cpu:.0f} %)")
        md.append(f"N = {r['n']:,}: samekey {', '.join(extra)}; DuckDB "
                  f"{dpairs} matched pairs{synth}{cpu}.\n")
        md.append("| samekey stage (`--timings`) | s | DuckDB step | s |")
        md.append("|---|---:|---|---:|")
        ks, ds = ki["stages"], di["stages"]
        for i in range(max(len(ks), len(ds))):
            a = ks[i] if i < len(ks) else ("", None)
            b = ds[i] if i < len(ds) else ("", None)
            fa = f"{a[1]:.3f}" if a[1] is not None else ""
            fb = f"{b[1]:.3f}" if b[1] is not None else ""
            md.append(f"| {a[0]} | {fa} | {b[0]} | {fb} |")
        md.append("")

    text = "\n".join(md)
    with open(args.out, "w", encoding="utf-8") as f:
        f.write(text)
    print(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
