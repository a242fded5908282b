#!/usr/bin/env python3
"""One-core Jaro-Winkler throughput: samekey's JaroMatcher against rapidfuzz.

Requirements (this script installs nothing itself):

    pip install rapidfuzz numpy

and a Rust toolchain. Run from the repository root:

    python3 bench/kernel_vs_rapidfuzz.py [--names 3000] [--repeat 3] [--seed 7]

What it does:
  1. Generates invented names from syllables with a seeded generator (no real people's data):
     given and family names of 2-4 syllables, half of them with one or two random typos of an
     earlier name, and a small share (default 5 %) built from syllables with non-ASCII letters.
  2. Times rapidfuzz `process.cdist(names, names,
     scorer=JaroWinkler.normalized_similarity, dtype=float64, workers=1)`: all names against
     all names on one core, best of --repeat runs.
  3. Builds and runs `cargo run --release --example jw_throughput` on the same names file,
     which times samekey's `JaroMatcher` (one query against all names, for every query) and
     `strsim::jaro_winkler` the same way on one core. The headline samekey number uses the
     fastest public API, `JaroMatcher::jaro_winkler_corpus` against a `JaroCorpus` of all
     names (prepared once, as cdist prepares its choices); `jaro_winkler_many` over plain
     `&[&str]` and one `jaro_winkler` call per pair are shown too.
  4. Checks that samekey's scores for the first --sample-rows names against all names equal
     rapidfuzz's within 1e-9, and prints pairs per second side by side.
"""

import argparse
import os
import random
import subprocess
import sys
import tempfile
import time

import numpy as np
from rapidfuzz import __version__ as rapidfuzz_version
from rapidfuzz import process
from rapidfuzz.distance import JaroWinkler

ASCII_SYLLABLES = [
    "AN", "BER", "CHRI", "DA", "EL", "FIN", "GAR", "HEL", "IN", "JO", "KA", "LEN", "MAR",
    "NO", "OS", "PE", "RA", "SON", "TI", "UL", "VEN", "WIL", "ZA", "BRO", "STE", "MI", "LA",
    "TON", "RI", "SCH", "MEI", "ER", "HOF", "MANN", "KO", "VIC",
]
WIDE_SYLLABLES = [
    "MÜL", "LER", "BÄR", "GRÖ", "NER", "ØST", "ÅS", "JÉ", "RÔ", "ŁU", "KASZ", "DVO", "ŘÁK",
    "SCHÜ", "TZE", "ANN", "ELI", "SÉ",
]


def word(rng, syllables):
    return "".join(rng.choice(syllables) for _ in range(rng.randint(2, 4)))


def typo(rng, s):
    if len(s) < 2:
        return s
    c = list(s)
    i = rng.randrange(len(c) - 1)
    letter = chr(ord("A") + rng.randrange(26))
    op = rng.randrange(4)
    if op == 0:
        c[i] = letter
    elif op == 1:
        del c[i]
    elif op == 2:
        c.insert(i, letter)
    else:
        c[i], c[i + 1] = c[i + 1], c[i]
    return "".join(c)


def make_names(n, seed, wide_share):
    rng = random.Random(seed)
    names = []
    for k in range(n):
        if k % 2 == 1 and names:
            v = typo(rng, rng.choice(names))
            if rng.random() < 0.5:
                v = typo(rng, v)
            names.append(v)
            continue
        syl = WIDE_SYLLABLES if rng.random() < wide_share else ASCII_SYLLABLES
        if rng.random() < 0.5:
            names.append(word(rng, syl))
        else:
            names.append(word(rng, syl) + " " + word(rng, syl))
    return names


def run_rapidfuzz(names, repeat):
    best = float("inf")
    matrix = None
    for _ in range(repeat):
        start = time.perf_counter()
        matrix = process.cdist(
            names,
            names,
            scorer=JaroWinkler.normalized_similarity,
            dtype=np.float64,
            workers=1,
        )
        best = min(best, time.perf_counter() - start)
    return best, matrix


def run_samekey(names_path, sample_path, repeat, sample_rows, repo):
    subprocess.run(
        ["cargo", "build", "--release", "--quiet", "--example", "jw_throughput"],
        cwd=repo,
        check=True,
    )
    exe = os.path.join(repo, "target", "release", "examples", "jw_throughput")
    out = subprocess.run(
        [exe, names_path, "--repeat", str(repeat), "--sample-out", sample_path,
         "--sample-rows", str(sample_rows)],
        check=True,
        capture_output=True,
        text=True,
    ).stdout
    return dict(line.split("=", 1) for line in out.splitlines() if "=" in line)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--names", type=int, default=3000, help="number of names (pairs = n^2)")
    ap.add_argument("--repeat", type=int, default=3, help="timed runs; the best is kept")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--wide-share", type=float, default=0.05,
                    help="share of names built from non-ASCII syllables")
    ap.add_argument("--sample-rows", type=int, default=20,
                    help="rows of the score matrix compared value by value")
    args = ap.parse_args()

    repo = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    names = make_names(args.names, args.seed, args.wide_share)
    pairs = len(names) ** 2

    with tempfile.TemporaryDirectory() as tmp:
        names_path = os.path.join(tmp, "names.txt")
        sample_path = os.path.join(tmp, "sample.tsv")
        with open(names_path, "w", encoding="utf-8", newline="\n") as f:
            f.write("\n".join(names) + "\n")

        rf_secs, matrix = run_rapidfuzz(names, args.repeat)
        kl = run_samekey(names_path, sample_path, args.repeat, args.sample_rows, repo)

        sample = np.loadtxt(sample_path, delimiter="\t", ndmin=2)
        rows = sample[:, 0].astype(int)
        cols = sample[:, 1].astype(int)
        diff = np.abs(sample[:, 2] - matrix[rows, cols])
        max_diff = float(diff.max()) if len(diff) else 0.0

    kl_pps = float(kl["samekey_pairs_per_sec"])
    ss_pps = float(kl["strsim_pairs_per_sec"])
    rf_pps = pairs / rf_secs
    non_ascii = sum(1 for n in names if not n.isascii())
    print(f"names: {len(names)} ({non_ascii} with non-ASCII letters), "
          f"pairs: {pairs}, seed {args.seed}, best of {args.repeat}, one core")
    print(f"{'implementation':<44} {'seconds':>9} {'pairs/s':>14} {'ns/pair':>8}")
    for label, secs, pps in [
        (f"rapidfuzz {rapidfuzz_version} cdist(workers=1)", rf_secs, rf_pps),
        ("samekey jaro_winkler_corpus (JaroCorpus)", float(kl["samekey_seconds"]), kl_pps),
        ("samekey jaro_winkler_many (&[&str])", float(kl["samekey_many_seconds"]),
         float(kl["samekey_many_pairs_per_sec"])),
        ("samekey jaro_winkler (one call per pair)", float(kl["samekey_single_seconds"]),
         float(kl["samekey_single_pairs_per_sec"])),
        ("strsim jaro_winkler", float(kl["strsim_seconds"]), ss_pps),
    ]:
        print(f"{label:<44} {secs:>9.4f} {pps:>14,.0f} {1e9 / pps:>8.1f}")
    print(f"samekey / rapidfuzz throughput: {kl_pps / rf_pps:.2f}x")
    print(f"checked {len(diff)} scores against rapidfuzz: max |diff| = {max_diff:.3g}")
    if not max_diff <= 1e-9:
        print("MISMATCH: samekey and rapidfuzz disagree by more than 1e-9", file=sys.stderr)
        sys.exit(1)


if __name__ == "__main__":
    main()
