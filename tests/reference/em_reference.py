#!/usr/bin/env python3
"""EM reference for the Fellegi-Sunter latent class model (project-owned reference script).

Generates a synthetic comparison-vector data set with KNOWN parameters, fits the
two-class conditional-independence latent class model two ways:

  1. a small, deterministic NumPy EM written here (the reference the Rust EM should match), and
  2. stepmix (general-purpose latent class package, categorical measurement model), if installed,

and prints / writes the results so Rust tests can be checked against them.

Data model (all fields conditionally independent given the class):
  * K = 5 comparison fields, each with L = 3 agreement levels
      level 0 = disagree, level 1 = partial agreement, level 2 = full agreement
  * class M (match) with prevalence LAMBDA, class U (non-match) with 1 - LAMBDA
  * gamma_k | M ~ Categorical(M_PROBS[k]),  gamma_k | U ~ Categorical(U_PROBS[k])

Because the model only depends on the data through the counts of each of the
L**K = 243 distinct comparison patterns, `--patterns-csv` writes those counts
(plus the number of true matches per pattern).  A Rust test can load that CSV,
run its EM on the pattern counts, and compare with the numbers printed here.

Usage:
  python3 tests/reference/em_reference.py                       # print report (numpy EM + stepmix if available)
  python3 tests/reference/em_reference.py --patterns-csv P.csv  # also write pattern counts
  python3 tests/reference/em_reference.py --pairs-csv X.csv     # also write all 50,000 rows (gamma + true label)
  python3 tests/reference/em_reference.py --json R.json         # machine-readable results

Determinism: numpy.random.default_rng(SEED) with SEED = 20240601; the pattern counts
depend only on numpy's PCG64 + Generator.random, which is stable across numpy versions
for a fixed seed (numpy's documented stream-compatibility policy for Generator may change
only across major versions; re-check the printed checksum line after upgrading numpy).
"""
from __future__ import annotations

import argparse
import hashlib
import json
import math
import sys

import numpy as np

SEED = 20240601
N_PAIRS = 50_000
LAMBDA = 0.04  # true match prevalence among candidate pairs

FIELDS = ["first_name", "last_name", "birth_date", "email", "postcode"]
LEVELS = ["disagree", "partial", "agree"]
# m_k(l) = P(gamma_k = l | M); u_k(l) = P(gamma_k = l | U).  Rows sum to 1.
M_PROBS = np.array(
    [
        [0.05, 0.15, 0.80],  # first_name: nicknames/typos give many partials
        [0.03, 0.07, 0.90],  # last_name
        [0.04, 0.11, 0.85],  # birth_date: partial = 1-2 components differ
        [0.30, 0.10, 0.60],  # email: people have several addresses
        [0.10, 0.20, 0.70],  # postcode: people move
    ]
)
U_PROBS = np.array(
    [
        [0.80, 0.15, 0.05],
        [0.90, 0.08, 0.02],
        [0.85, 0.14, 0.01],
        [0.97, 0.02, 0.01],
        [0.70, 0.20, 0.10],
    ]
)
K, L = M_PROBS.shape


def generate(n_pairs: int = N_PAIRS, seed: int = SEED):
    """Return (gamma, is_match): gamma int8 array (n_pairs, K) with values 0..L-1."""
    rng = np.random.default_rng(seed)
    is_match = rng.random(n_pairs) < LAMBDA
    gamma = np.empty((n_pairs, K), dtype=np.int8)
    for k in range(K):
        r = rng.random(n_pairs)
        cm = np.cumsum(M_PROBS[k])
        cu = np.cumsum(U_PROBS[k])
        gm = np.searchsorted(cm, r, side="right")
        gu = np.searchsorted(cu, r, side="right")
        gamma[:, k] = np.where(is_match, gm, gu).clip(0, L - 1)
    return gamma, is_match


def pattern_index(gamma: np.ndarray) -> np.ndarray:
    """Mixed-radix index: field 0 is the most significant digit."""
    idx = np.zeros(gamma.shape[0], dtype=np.int64)
    for k in range(gamma.shape[1]):
        idx = idx * L + gamma[:, k]
    return idx


def pattern_table(gamma, is_match):
    idx = pattern_index(gamma)
    counts = np.bincount(idx, minlength=L**K)
    matches = np.bincount(idx[is_match], minlength=L**K)
    pats = np.array(np.unravel_index(np.arange(L**K), (L,) * K)).T  # (243, K)
    return pats, counts, matches


def complete_data_mle(gamma, is_match):
    """What EM would return if labels were known (the 'oracle' sample estimates)."""
    lam = is_match.mean()
    m = np.array([[np.mean(gamma[is_match, k] == l) for l in range(L)] for k in range(K)])
    u = np.array([[np.mean(gamma[~is_match, k] == l) for l in range(L)] for k in range(K)])
    return lam, m, u


def loglik(pats, counts, lam, m, u):
    lm = np.log(lam) + sum(np.log(m[k, pats[:, k]]) for k in range(K))
    lu = np.log1p(-lam) + sum(np.log(u[k, pats[:, k]]) for k in range(K))
    mx = np.maximum(lm, lu)
    ll_p = mx + np.log(np.exp(lm - mx) + np.exp(lu - mx))
    return float(np.sum(counts * ll_p)), lm, lu


def fit_em(pats, counts, lam0=0.1, m0=None, u0=None, tol=1e-14, max_iter=10_000, floor=1e-12):
    """Deterministic EM on pattern counts.

    Init (Winkler-style): lambda0 = 0.1; m0 puts 0.9 on 'agree' and splits the rest evenly
    (monotone in level); u0 = overall marginal frequencies of each level (all pairs), which
    are ~u because non-matches dominate.
    Stops when the log-likelihood increase is < tol * |loglik| (relative) or max_iter.
    Returns dict with lambda, m, u, loglik, iterations, and the monotonicity check.
    """
    n = counts.sum()
    if m0 is None:
        m0 = np.tile(np.array([0.05, 0.05, 0.90]), (K, 1))
    if u0 is None:
        u0 = np.array([[counts[pats[:, k] == l].sum() / n for l in range(L)] for k in range(K)])
    lam, m, u = lam0, m0.copy(), u0.copy()
    prev = -math.inf
    history = []
    it = 0
    for it in range(1, max_iter + 1):
        # E-step: g_j = P(M | pattern j)
        ll, lm, lu = loglik(pats, counts, lam, m, u)
        history.append(ll)
        g = 1.0 / (1.0 + np.exp(lu - lm))
        # M-step
        wm = counts * g
        wu = counts * (1.0 - g)
        lam = wm.sum() / n
        for k in range(K):
            for l in range(L):
                sel = pats[:, k] == l
                m[k, l] = wm[sel].sum() / wm.sum()
                u[k, l] = wu[sel].sum() / wu.sum()
        m = np.clip(m, floor, None)
        m /= m.sum(axis=1, keepdims=True)
        u = np.clip(u, floor, None)
        u /= u.sum(axis=1, keepdims=True)
        if ll - prev < tol * abs(ll):
            break
        prev = ll
    ll, _, _ = loglik(pats, counts, lam, m, u)
    monotone = all(b >= a - 1e-9 * abs(a) for a, b in zip(history, history[1:]))
    return dict(lam=lam, m=m, u=u, loglik=ll, iterations=it, monotone=monotone)


def fit_stepmix(gamma, seed=SEED):
    try:
        from stepmix.stepmix import StepMix
    except ImportError:
        return None
    model = StepMix(
        n_components=2,
        measurement="categorical",
        n_init=5,
        max_iter=5000,
        abs_tol=1e-10,
        random_state=seed,
        verbose=0,
        progress_bar=0,
    )
    model.fit(gamma.astype(int))
    p = model.get_parameters()
    weights = np.asarray(p["weights"])
    pis = np.asarray(p["measurement"]["pis"])  # (2, K*L), feature-major
    probs = pis.reshape(2, K, -1)[:, :, :L]
    # label switching: the match class has the larger P(last_name agree)
    mc = int(np.argmax(probs[:, 1, L - 1]))
    uc = 1 - mc
    import stepmix

    return dict(
        version=getattr(stepmix, "__version__", "?"),
        lam=float(weights[mc]),
        m=probs[mc],
        u=probs[uc],
        avg_loglik=float(model.score(gamma.astype(int))),
    )


def fs_thresholds(m, u, mu=0.001, nu=0.01):
    """Fellegi-Sunter thresholds on the composite log2 weight, from EXACT pattern probabilities.

    m(g) = prod_k m_k(g_k), u(g) = prod_k u_k(g_k) over all L**K patterns.
    Upper threshold T_up: smallest pattern weight W such that sum of u(g) over patterns with
    weight >= W is <= mu (false-link rate bound; no randomisation at the boundary).
    Lower threshold T_low: largest pattern weight W such that sum of m(g) over patterns with
    weight <= W is <= nu (false non-link rate bound).
    Returns dict with thresholds, achieved error rates, and clerical-review mass under m and u.
    """
    pats = np.array(np.unravel_index(np.arange(L**K), (L,) * K)).T
    mg = np.prod([m[k, pats[:, k]] for k in range(K)], axis=0)
    ug = np.prod([u[k, pats[:, k]] for k in range(K)], axis=0)
    w = np.log2(mg / ug)
    order = np.argsort(-w, kind="stable")
    cu = np.cumsum(ug[order])
    n_up = int(np.searchsorted(cu, mu, side="right"))  # top n_up patterns have cum u <= mu
    t_up = float(w[order][n_up - 1]) if n_up > 0 else math.inf
    order_lo = np.argsort(w, kind="stable")
    cm = np.cumsum(mg[order_lo])
    n_lo = int(np.searchsorted(cm, nu, side="right"))
    t_low = float(w[order_lo][n_lo - 1]) if n_lo > 0 else -math.inf
    link = w >= t_up
    nonlink = w <= t_low
    review = ~link & ~nonlink
    return dict(t_up=t_up, t_low=t_low, false_link_rate=float(ug[link].sum()),
                false_nonlink_rate=float(mg[nonlink].sum()), review_mass_m=float(mg[review].sum()),
                review_mass_u=float(ug[review].sum()), n_link=int(link.sum()), n_nonlink=int(nonlink.sum()),
                n_review=int(review.sum()), w_max=float(w.max()), w_min=float(w.min()))


def weights_table(m, u):
    """log2(m/u) per field and level (Fellegi-Sunter partial weights)."""
    return np.log2(m / u)


def fmt(a):
    return "[" + ", ".join(f"{x:.4f}" for x in a) + "]"


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--patterns-csv")
    ap.add_argument("--pairs-csv")
    ap.add_argument("--json")
    ap.add_argument("--no-stepmix", action="store_true")
    args = ap.parse_args(argv)

    gamma, is_match = generate()
    pats, counts, matches = pattern_table(gamma, is_match)
    digest = hashlib.sha256(counts.astype("<i8").tobytes()).hexdigest()[:16]
    print(f"numpy {np.__version__}; seed {SEED}; pairs {N_PAIRS}; true matches {int(is_match.sum())}")
    print(f"pattern-count sha256[:16] = {digest}  (243 patterns, {int((counts > 0).sum())} non-empty)")

    lam_s, m_s, u_s = complete_data_mle(gamma, is_match)
    em = fit_em(pats, counts)
    sm = None if args.no_stepmix else fit_stepmix(gamma)
    ll_true, _, _ = loglik(pats, counts, LAMBDA, M_PROBS, U_PROBS)

    print(f"\nlambda: true {LAMBDA:.4f} | sample {lam_s:.4f} | numpy-EM {em['lam']:.4f}"
          + (f" | stepmix {sm['lam']:.4f}" if sm else ""))
    for k, f in enumerate(FIELDS):
        print(f"{f:11s} m true {fmt(M_PROBS[k])} sample {fmt(m_s[k])} EM {fmt(em['m'][k])}"
              + (f" stepmix {fmt(sm['m'][k])}" if sm else ""))
        print(f"{'':11s} u true {fmt(U_PROBS[k])} sample {fmt(u_s[k])} EM {fmt(em['u'][k])}"
              + (f" stepmix {fmt(sm['u'][k])}" if sm else ""))
    print(f"\nnumpy-EM: loglik {em['loglik']:.4f} after {em['iterations']} iterations; monotone={em['monotone']}")
    print(f"loglik at TRUE parameters {ll_true:.4f} (EM optimum must be >= this)")
    if sm:
        print(f"stepmix {sm['version']}: mean loglik per pair {sm['avg_loglik']:.8f} "
              f"(x N = {sm['avg_loglik'] * N_PAIRS:.4f})")
    w = weights_table(em["m"], em["u"])
    print("\nlog2(m/u) weights from numpy-EM (disagree, partial, agree):")
    for k, f in enumerate(FIELDS):
        print(f"  {f:11s} {fmt(w[k])}")
    # posterior for a few patterns
    _, lm, lu = loglik(pats, counts, em["lam"], em["m"], em["u"])
    post = 1.0 / (1.0 + np.exp(lu - lm))
    print("\nposterior P(M|gamma) for selected patterns (numpy-EM params):")
    for p in [(2, 2, 2, 2, 2), (2, 2, 2, 0, 2), (1, 2, 2, 0, 0), (2, 2, 0, 0, 0), (0, 2, 0, 0, 2), (0, 0, 0, 0, 0)]:
        j = int(np.ravel_multi_index(p, (L,) * K))
        print(f"  {p}: count {counts[j]:5d}, true matches {matches[j]:5d}, P(M|g) = {post[j]:.6f}")

    fs = fs_thresholds(M_PROBS, U_PROBS, mu=0.001, nu=0.01)
    print("\nFellegi-Sunter thresholds from TRUE parameters (mu=0.001, nu=0.01), log2 scale:")
    print(f"  T_up {fs['t_up']:.6f}  T_low {fs['t_low']:.6f}  (weights range {fs['w_min']:.4f} .. {fs['w_max']:.4f})")
    print(f"  achieved false-link rate {fs['false_link_rate']:.6g}, false non-link rate {fs['false_nonlink_rate']:.6g}")
    print(f"  patterns: link {fs['n_link']}, review {fs['n_review']}, non-link {fs['n_nonlink']}; "
          f"review mass under m {fs['review_mass_m']:.6f}, under u {fs['review_mass_u']:.6f}")

    if args.patterns_csv:
        with open(args.patterns_csv, "w") as fh:
            fh.write(",".join(FIELDS) + ",count,true_matches\n")
            for j in range(L**K):
                fh.write(",".join(str(int(x)) for x in pats[j]) + f",{counts[j]},{matches[j]}\n")
    if args.pairs_csv:
        with open(args.pairs_csv, "w") as fh:
            fh.write(",".join(FIELDS) + ",is_match\n")
            for row, y in zip(gamma, is_match):
                fh.write(",".join(str(int(x)) for x in row) + f",{int(y)}\n")
    if args.json:
        out = dict(
            seed=SEED, n_pairs=N_PAIRS, fields=FIELDS, levels=LEVELS, pattern_sha256_16=digest,
            true=dict(lam=LAMBDA, m=M_PROBS.tolist(), u=U_PROBS.tolist(), loglik=ll_true),
            sample=dict(lam=float(lam_s), m=m_s.tolist(), u=u_s.tolist()),
            numpy_em=dict(lam=float(em["lam"]), m=em["m"].tolist(), u=em["u"].tolist(),
                          loglik=em["loglik"], iterations=em["iterations"]),
        )
        if sm:
            out["stepmix"] = dict(version=sm["version"], lam=sm["lam"], m=sm["m"].tolist(),
                                  u=sm["u"].tolist(), loglik=sm["avg_loglik"] * N_PAIRS)
        with open(args.json, "w") as fh:
            json.dump(out, fh, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
