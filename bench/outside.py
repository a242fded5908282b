#!/usr/bin/env python3
"""Outside benchmark: samekey on customer data from a generator samekey did not write.

For each data set (difficulty, customers, seed) this script
  1. generates the data with the outside generator (`gen.py`), unless it is already there;
  2. copies the spec a new user writes from the README (bench/outside/spec.toml) next to it;
  3. runs `samekey link` unsupervised (wall time and peak RSS from /usr/bin/time -v);
  4. fits the same comparisons from the true labels (`samekey train --oracle-truth`) and
     links with that model: the ceiling the comparisons allow under the model's form;
  5. runs the hand-written SQL rules (`baseline_duckdb.py`), timed the same way;
  6. scores every crosswalk with the outside scorer (`score.py`);
and prints one Markdown table (also written to --results), plus blocking pair completeness
per key and candidate pairs per record from samekey's own evaluation.

Usage (see bench/README.md):
  bench/outside.sh [--sets medium:100000:1,hard:10000:1] [--work DIR] [--results FILE]
                   [--outside DIR] [--skip-baseline] [--skip-oracle]
"""
import argparse
import csv
import datetime as dt
import json
import os
import platform
import re
import shutil
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def die(msg):
    print("outside-bench: error: " + msg, file=sys.stderr)
    sys.exit(2)


def timed(cmd, log, cwd=None):
    """Runs cmd under /usr/bin/time -v; returns (wall seconds, peak RSS MiB, cpu seconds)."""
    with open(log, "w") as out:
        full = ["/usr/bin/time", "-v"] + cmd
        r = subprocess.run(full, stdout=out, stderr=subprocess.STDOUT, cwd=cwd)
    text = open(log, encoding="utf-8", errors="replace").read()
    if r.returncode != 0:
        tail = "\n".join(text.splitlines()[-20:])
        die("command failed (exit %d): %s\n%s" % (r.returncode, " ".join(cmd), tail))
    wall = re.search(r"Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): (\S+)", text).group(1)
    parts = [float(p) for p in wall.split(":")]
    secs = 0.0
    for p in parts:
        secs = secs * 60 + p
    rss = int(re.search(r"Maximum resident set size \(kbytes\): (\d+)", text).group(1)) / 1024
    user = float(re.search(r"User time \(seconds\): (\S+)", text).group(1))
    sys_t = float(re.search(r"System time \(seconds\): (\S+)", text).group(1))
    return secs, rss, user + sys_t


def convert_truth(src, dst):
    """The generator's truth (`source_system,source_id,entity_id`) in samekey's truth form."""
    with open(src, newline="") as f, open(dst, "w", newline="") as g:
        r = csv.reader(f)
        w = csv.writer(g)
        header = next(r)
        if header[:3] != ["source_system", "source_id", "entity_id"]:
            die("%s: unexpected header %s" % (src, header))
        w.writerow(["source", "source_id", "entity_id"])
        for row in r:
            w.writerow(row[:3])


def crosswalk_to_pred(crosswalk, dst):
    """samekey's crosswalk (source, source_id, customer key) in the scorer's column names."""
    with open(crosswalk, newline="") as f, open(dst, "w", newline="") as g:
        r = csv.reader(f)
        w = csv.writer(g)
        next(r)
        w.writerow(["source_system", "source_id", "key"])
        for row in r:
            w.writerow(row[:3])


def score(py, outside, truth, pred):
    r = subprocess.run([py, os.path.join(outside, "score.py"), "--truth", truth, "--pred", pred,
                        "--json"], capture_output=True, text=True)
    if r.returncode != 0:
        die("score.py failed: " + r.stderr[-2000:])
    return json.loads(r.stdout)


def completeness_lines(log):
    """Blocking table and truth-based pair completeness from samekey's link output."""
    text = open(log, encoding="utf-8", errors="replace").read()
    keys = []
    m = re.search(r"\nBlocking \((\d+) records\)\n(.*?)\n  candidate pairs: (\d+)", text, re.S)
    records = cands = None
    if m:
        records = int(m.group(1))
        cands = int(m.group(3))
        for line in m.group(2).splitlines()[1:]:
            cols = line.split()
            if len(cols) >= 3:
                keys.append((cols[0], int(cols[1]), int(cols[2])))
    pc = re.search(r"pair completeness\s+([0-9.]+)", text)
    est = re.search(r"precision\s+([0-9.]+)\s+([0-9.]+)\n\s+recall \(of candidates' matches\)\s+"
                    r"([0-9.]+)\s+([0-9.]+)", text)
    return {
        "records": records,
        "candidate_pairs": cands,
        "keys": keys,
        "pair_completeness": float(pc.group(1)) if pc else None,
        "precision_estimated": float(est.group(1)) if est else None,
        "precision_actual": float(est.group(2)) if est else None,
    }


def main():
    ap = argparse.ArgumentParser(description=__doc__,
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--sets", default="medium:10000:1,hard:10000:1,medium:100000:1",
                    help="comma-separated difficulty:customers:seed (default %(default)s)")
    ap.add_argument("--work", default=os.path.join(ROOT, "target", "outside-bench"))
    ap.add_argument("--results", default=None)
    ap.add_argument("--outside", default=os.environ.get(
        "OUTSIDE_BENCH", os.path.join(os.path.dirname(ROOT), "shared", "outside-bench")),
        help="folder with gen.py, score.py and baseline_duckdb.py (default: $OUTSIDE_BENCH, "
             "else ../shared/outside-bench beside the repository)")
    ap.add_argument("--spec", default=os.path.join(ROOT, "bench", "outside", "spec.toml"))
    ap.add_argument("--samekey", default=os.path.join(ROOT, "target", "release", "samekey"))
    ap.add_argument("--python", default=sys.executable)
    ap.add_argument("--skip-baseline", action="store_true")
    ap.add_argument("--skip-oracle", action="store_true")
    args = ap.parse_args()

    for f in ("gen.py", "score.py", "baseline_duckdb.py"):
        if not os.path.exists(os.path.join(args.outside, f)):
            die("--outside %s has no %s: point it at the outside benchmark's folder" %
                (args.outside, f))
    if not os.access(args.samekey, os.X_OK):
        die("no samekey binary at %s: run `cargo build --release` first" % args.samekey)
    sets = []
    for item in args.sets.split(","):
        m = re.fullmatch(r"(easy|medium|hard):(\d+):(\d+)", item.strip())
        if not m:
            die("--sets item `%s`: write difficulty:customers:seed, e.g. medium:100000:1" % item)
        sets.append((m.group(1), int(m.group(2)), int(m.group(3))))
    os.makedirs(args.work, exist_ok=True)
    rows = []
    for diff, n, seed in sets:
        data = os.path.join(args.work, "%s-%d-s%d" % (diff, n, seed))
        truth = os.path.join(data, "truth.csv")
        if not os.path.exists(os.path.join(data, "manifest.json")):
            print("== generating %s %d seed %d" % (diff, n, seed), flush=True)
            subprocess.run([args.python, os.path.join(args.outside, "gen.py"), "--entities",
                            str(n), "--seed", str(seed), "--out", data, "--difficulty", diff],
                           check=True, stdout=subprocess.DEVNULL)
        shutil.copy(args.spec, os.path.join(data, "spec.toml"))
        spec = os.path.join(data, "spec.toml")
        truth_sk = os.path.join(data, "truth_samekey.csv")
        convert_truth(truth, truth_sk)
        row = {"set": "%s %s (seed %d)" % (diff, f"{n:,}", seed)}

        print("== samekey link (unsupervised) on %s" % row["set"], flush=True)
        out = os.path.join(data, "out-unsupervised")
        log = os.path.join(data, "link-unsupervised.log")
        row["sk_time"], row["sk_rss"], row["sk_cpu"] = timed(
            [args.samekey, "link", "--spec", spec, "--out", out, "--pairs", "all", "--truth",
             truth_sk], log)
        crosswalk_to_pred(os.path.join(out, "crosswalk.csv"), os.path.join(data, "pred_sk.csv"))
        row["sk"] = score(args.python, args.outside, truth, os.path.join(data, "pred_sk.csv"))
        row["sk_block"] = completeness_lines(log)

        if not args.skip_oracle:
            print("== samekey oracle fit on %s" % row["set"], flush=True)
            model = os.path.join(data, "oracle-model", "model.toml")
            timed([args.samekey, "train", "--spec", spec, "--out",
                   os.path.join(data, "oracle-model"), "--oracle-truth",
                   truth_sk], os.path.join(data, "train-oracle.log"))
            out_o = os.path.join(data, "out-oracle")
            timed([args.samekey, "link", "--spec", spec, "--out", out_o, "--model", model,
                   "--pairs", "linked"], os.path.join(data, "link-oracle.log"))
            crosswalk_to_pred(os.path.join(out_o, "crosswalk.csv"),
                              os.path.join(data, "pred_oracle.csv"))
            row["oracle"] = score(args.python, args.outside, truth,
                                  os.path.join(data, "pred_oracle.csv"))

        if not args.skip_baseline:
            print("== SQL baseline on %s" % row["set"], flush=True)
            pred_b = os.path.join(data, "pred_duckdb.csv")
            row["db_time"], row["db_rss"], row["db_cpu"] = timed(
                [args.python, os.path.join(args.outside, "baseline_duckdb.py"), "--data", data,
                 "--pred", pred_b, "--threads", "2"], os.path.join(data, "baseline.log"))
            row["db"] = score(args.python, args.outside, truth, pred_b)
        rows.append(row)

    def prf(s):
        p = s["pairwise"]
        return "%.3f / %.3f / **%.3f**" % (p["precision"], p["recall"], p["f1"])

    def b3(s):
        return "%.3f" % s["bcubed"]["f1"]

    today = dt.date.today().isoformat()
    lines = [
        "Outside benchmark, %s, %s (%d cores), samekey %s" % (
            today, platform.node() or "this machine", os.cpu_count() or 0,
            subprocess.run([args.samekey, "--version"], capture_output=True,
                           text=True).stdout.strip()),
        "",
        "| data | samekey pairwise P / R / F1 | B-cubed F1 | oracle fit P / R / F1 | "
        "SQL rules P / R / F1 | SQL B-cubed F1 | samekey time, RSS | SQL time |",
        "|---|---|---|---|---|---|---|---|",
    ]
    for r in rows:
        lines.append("| %s | %s | %s | %s | %s | %s | %.1f s, %.0f MiB | %s |" % (
            r["set"], prf(r["sk"]), b3(r["sk"]),
            prf(r["oracle"]) if "oracle" in r else "–",
            prf(r["db"]) if "db" in r else "–", b3(r["db"]) if "db" in r else "–",
            r["sk_time"], r["sk_rss"], "%.1f s" % r["db_time"] if "db" in r else "–"))
    lines += ["", "Blocking and the model's own estimate (samekey's evaluation of the unsupervised run):", "",
              "| data | candidate pairs per record | pair completeness | precision estimated / actual | pairs per key (new pairs) |",
              "|---|---|---|---|---|"]
    for r in rows:
        b = r["sk_block"]
        per = (b["candidate_pairs"] / b["records"]) if b["records"] else float("nan")
        keys = ", ".join("%s %d (%d)" % k for k in b["keys"])
        lines.append("| %s | %.2f | %s | %s / %s | %s |" % (
            r["set"], per, b["pair_completeness"], b["precision_estimated"],
            b["precision_actual"], keys))
    text = "\n".join(lines) + "\n"
    print()
    print(text)
    results = args.results or os.path.join(args.work, "results-%s.md" % today)
    with open(results, "w") as f:
        f.write(text)
    with open(os.path.splitext(results)[0] + ".json", "w") as f:
        json.dump(rows, f, indent=1)
    print("written: %s" % results)


if __name__ == "__main__":
    main()
