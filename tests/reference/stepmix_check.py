#!/usr/bin/env python3
"""Compare samekey's EM with the stepmix latent class model on the same patterns.

In:  tests/data/em_reference_patterns.csv (pattern counts; level 0 = disagree).
Out: a table of both fits and their differences; exit status 0 when they agree,
     1 when any difference exceeds the tolerance, 2 when something cannot run.

samekey's fit comes from `cargo run --example em_fit` (JSON on stdout). stepmix
(PyPI `stepmix`, two-class categorical measurement model, the same model: latent
classes with conditionally independent categorical indicators) is fitted on the
patterns expanded to one row per pair, with the settings of tests/reference/em_reference.py.

Tolerance: 1e-5 absolute on lambda and on every m and u probability, 1e-3 on the
total log-likelihood (natural log, sum over pairs). Both programs stop on tiny
changes but not at the exact maximum; the two fits agree far better than this
(see docs/check-values.md §8: numpy EM vs stepmix <= 7e-7).

Usage (from the repository root):
  pip install stepmix numpy
  python3 tests/reference/stepmix_check.py [PATTERNS.csv]
"""
from __future__ import annotations

import csv
import json
import os
import subprocess
import sys

TOL_PROB = 1e-5
TOL_LOGLIK = 1e-3
SEED = 20240601  # as in tests/reference/em_reference.py


def main(argv: list[str]) -> int:
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    path = argv[1] if len(argv) > 1 else os.path.join(root, "tests", "data", "em_reference_patterns.csv")
    try:
        import numpy as np
        import stepmix
        from stepmix.stepmix import StepMix
    except ImportError as e:
        print(f"cannot import stepmix/numpy ({e}); run `pip install stepmix numpy`", file=sys.stderr)
        return 2

    # --- samekey ---------------------------------------------------------
    cmd = ["cargo", "run", "--quiet", "--example", "em_fit", "--", path, "--levels-ascending"]
    run = subprocess.run(cmd, cwd=root, capture_output=True, text=True)
    if run.returncode != 0:
        print(f"`{' '.join(cmd)}` failed:\n{run.stderr}", file=sys.stderr)
        return 2
    kin = json.loads(run.stdout)
    fields = kin["fields"]
    k_attr = len(fields)

    # --- patterns -> rows --------------------------------------------------
    with open(path, newline="") as fh:
        reader = csv.DictReader(fh)
        pats, counts = [], []
        for row in reader:
            pats.append([int(row[f]) for f in fields])
            counts.append(int(row["count"]))
    pats = np.array(pats, dtype=int)
    counts = np.array(counts, dtype=int)
    gamma = np.repeat(pats, counts, axis=0)
    n = int(counts.sum())
    n_levels = [int(pats[:, k].max()) + 1 for k in range(k_attr)]

    # --- stepmix -------------------------------------------------------------
    model = StepMix(
        n_components=2,
        measurement="categorical",
        n_init=5,
        max_iter=5000,
        abs_tol=1e-10,
        random_state=SEED,
        verbose=0,
        progress_bar=0,
    )
    model.fit(gamma)
    p = model.get_parameters()
    weights = np.asarray(p["weights"])
    pis = np.asarray(p["measurement"]["pis"])  # (2, K * max_levels), attribute-major
    max_l = pis.shape[1] // k_attr
    probs = pis.reshape(2, k_attr, max_l)
    # Label switching: the match class is the one where the top level ("agree",
    # the highest code in this file) is more likely, summed over attributes.
    agree = [sum(probs[c, k, n_levels[k] - 1] for k in range(k_attr)) for c in range(2)]
    mc = int(np.argmax(agree))
    uc = 1 - mc
    sm_lam = float(weights[mc])
    sm_m = [probs[mc, k, : n_levels[k]] for k in range(k_attr)]
    sm_u = [probs[uc, k, : n_levels[k]] for k in range(k_attr)]
    sm_ll = float(model.score(gamma)) * n

    # --- compare -------------------------------------------------------------
    print(f"stepmix {getattr(stepmix, '__version__', '?')}, numpy {np.__version__}; "
          f"{n} pairs, {len(pats)} patterns, samekey iterations {kin['iterations']}")
    worst = abs(kin["lambda"] - sm_lam)
    print(f"{'lambda':24s} samekey {kin['lambda']:.8f}  stepmix {sm_lam:.8f}  diff {kin['lambda'] - sm_lam:+.2e}")
    for k, f in enumerate(fields):
        for name, ours, theirs in (("m", kin["m"][k], sm_m[k]), ("u", kin["u"][k], sm_u[k])):
            for l in range(n_levels[k]):
                d = ours[l] - float(theirs[l])
                worst = max(worst, abs(d))
                print(f"{f + ' ' + name + '[' + str(l) + ']':24s} samekey {ours[l]:.8f}  "
                      f"stepmix {float(theirs[l]):.8f}  diff {d:+.2e}")
    dll = kin["loglik"] - sm_ll
    print(f"{'log-likelihood':24s} samekey {kin['loglik']:.4f}  stepmix {sm_ll:.4f}  diff {dll:+.2e}")
    print(f"largest probability difference {worst:.2e} (tolerance {TOL_PROB:g}); "
          f"log-likelihood difference {abs(dll):.2e} (tolerance {TOL_LOGLIK:g})")
    if worst > TOL_PROB or abs(dll) > TOL_LOGLIK:
        print("DISAGREE", file=sys.stderr)
        return 1
    print("agree")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
