//! `samekey plan`: what the blocking keys will produce, before linking.
//!
//! In: a spec (its sources and blocking keys), optionally a truth file and a fitted model.
//! Out, per blocking key: records keyed, blocks, pairs in its blocks, and the pairs it adds
//! to the earlier keys ("new" pairs, the ones `link` compares), counted exactly when the key
//! has at most [`EXACT_PAIRS`] pairs and estimated from a uniform sample of its pairs
//! otherwise, with a 95% interval. With a truth file, the pair completeness per key.
//!
//! Without labels, a fitted model (`--model`, or a quick fit on the spot) tells how many of
//! the candidate pairs are confident matches (probability at least `--confident`) and which
//! keys find them: each key's share of them is an estimate of its pair completeness (of the
//! matches the keys find together; matches that no key proposes cannot be counted this
//! way). Keys built from the compared attributes that the spec does not have are tried the
//! same way, and the ones that would add the most confident matches are suggested.

use std::path::PathBuf;

use samekey::block::{self, BlockSpec, Blocking, KeyBlocks, KeyPart, NO_KEY};
use samekey::decide::Decider;
use samekey::evaluate;
use samekey::model::{self, Model};
use samekey::prepare::{PrepareOptions, Prepared};
use samekey::record::Attr;
use samekey::score::PairScorer;
use samekey::util::{Progress, Rng};

use super::Global;

/// Arguments of `samekey plan`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// Truth file (`source,source_id,entity_id`): adds pair completeness per key.
    #[arg(long)]
    pub truth: Option<PathBuf>,
    /// How many of the largest blocks to list per key.
    #[arg(long, default_value_t = 5, allow_negative_numbers = true, value_parser = super::values::count)]
    pub top: usize,
    /// A fitted model (`samekey train`) for the label-free completeness estimates and the
    /// key suggestions; without it, a model is fitted on the spot.
    #[arg(long)]
    pub model: Option<PathBuf>,
    /// Skip the model: no label-free completeness and no suggestions (faster).
    #[arg(long)]
    pub no_model: bool,
    /// Probability from which a candidate pair counts as a confident match.
    #[arg(long, default_value_t = 0.99, allow_negative_numbers = true, value_parser = super::values::open_fraction)]
    pub confident: f64,
    /// Pairs sampled per key when a key has more than can be counted exactly.
    #[arg(long, default_value_t = 200_000, allow_negative_numbers = true, value_parser = super::values::positive)]
    pub sample: usize,
    /// Print the plan as JSON.
    #[arg(long)]
    pub json: bool,
}

/// Keys with at most this many pairs are counted exactly.
pub const EXACT_PAIRS: u64 = 2_000_000;

/// A count, exact or estimated with a 95% interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Count {
    /// The count or its estimate.
    pub value: f64,
    /// Lower end of the 95% interval (equal to `value` when exact).
    pub lo: f64,
    /// Upper end of the 95% interval.
    pub hi: f64,
    /// Counted, not estimated.
    pub exact: bool,
}

impl Count {
    fn exact(n: u64) -> Count {
        let v = n as f64;
        Count {
            value: v,
            lo: v,
            hi: v,
            exact: true,
        }
    }

    /// `hits` of `n` sampled pairs out of `total`: the share with a Wilson score interval
    /// (E. B. Wilson, "Probable inference, the law of succession, and statistical
    /// inference", JASA 22, 1927), scaled to `total`.
    fn sampled(hits: u64, n: u64, total: u64) -> Count {
        if n == 0 {
            return Count::exact(0);
        }
        let (z, nf) = (1.96f64, n as f64);
        let p = hits as f64 / nf;
        let denom = 1.0 + z * z / nf;
        let centre = (p + z * z / (2.0 * nf)) / denom;
        let half = z * (p * (1.0 - p) / nf + z * z / (4.0 * nf * nf)).sqrt() / denom;
        let t = total as f64;
        Count {
            value: p * t,
            lo: ((centre - half).max(0.0) * t).min(p * t),
            hi: ((centre + half).min(1.0) * t).max(p * t),
            exact: false,
        }
    }

    fn show(&self) -> String {
        if self.exact {
            format!("{}", self.value as u64)
        } else {
            format!(
                "{:.0} ({:.0}..{:.0})",
                self.value,
                self.lo.floor(),
                self.hi.ceil()
            )
        }
    }
}

/// Uniform random pairs of one key's blocks.
struct PairSampler<'a> {
    kb: &'a KeyBlocks,
    /// Pairs in blocks `0..=b`, per block.
    cum: Vec<u64>,
}

impl<'a> PairSampler<'a> {
    fn new(kb: &'a KeyBlocks) -> Self {
        let mut total = 0;
        let cum = (0..kb.len())
            .map(|b| {
                total += block::pairs_of(kb.block(b).len());
                total
            })
            .collect();
        PairSampler { kb, cum }
    }

    fn total(&self) -> u64 {
        self.cum.last().copied().unwrap_or(0)
    }

    /// A pair drawn uniformly from all pairs of the key's blocks (needs `total() > 0`).
    fn draw(&self, rng: &mut Rng) -> (u32, u32) {
        let r = rng.below(self.total());
        let b = self.cum.partition_point(|&c| c <= r);
        let members = self.kb.block(b);
        let n = members.len() as u64;
        let i = rng.below(n);
        let mut j = rng.below(n - 1);
        if j >= i {
            j += 1;
        }
        (members[i as usize], members[j as usize])
    }

    /// Every pair, in block order.
    fn each(&self, mut f: impl FnMut(u32, u32)) {
        for b in 0..self.kb.len() {
            let m = self.kb.block(b);
            for (i, &a) in m.iter().enumerate() {
                for &c in &m[i + 1..] {
                    f(a, c);
                }
            }
        }
    }
}

/// The pairs of `kb` that `keep` accepts: their count (exact, or estimated from `sample`
/// drawn pairs), and the accepted pairs seen with the weight each stands for.
pub struct Kept {
    /// How many pairs are kept.
    pub count: Count,
    /// The kept pairs that were looked at.
    pub pairs: Vec<(u32, u32)>,
    /// Pairs of the key each looked-at pair stands for.
    pub weight: f64,
}

/// The pairs of `kb` that `keep` accepts, all of them counted when the key has at most
/// `exact_up_to` pairs, else `sample` pairs drawn.
fn kept_pairs(
    kb: &KeyBlocks,
    exact_up_to: u64,
    sample: usize,
    rng: &mut Rng,
    keep: impl Fn(u32, u32) -> bool,
) -> Kept {
    let s = PairSampler::new(kb);
    let total = s.total();
    let mut pairs = Vec::new();
    if total <= exact_up_to {
        s.each(|a, b| {
            if keep(a, b) {
                pairs.push((a, b));
            }
        });
        return Kept {
            count: Count::exact(pairs.len() as u64),
            pairs,
            weight: 1.0,
        };
    }
    for _ in 0..sample {
        let (a, b) = s.draw(rng);
        if keep(a, b) {
            pairs.push((a, b));
        }
    }
    Kept {
        count: Count::sampled(pairs.len() as u64, sample as u64, total),
        pairs,
        weight: total as f64 / sample as f64,
    }
}

/// True when `kb` puts `a` and `b` in one block.
fn joins(kb: &KeyBlocks, a: u32, b: u32) -> bool {
    let ka = kb.key_of[a as usize];
    ka != NO_KEY && ka == kb.key_of[b as usize]
}

/// Per key, the pairs it adds to the earlier keys (what `link` compares for it).
pub fn new_pairs(blocking: &Blocking, sample: usize, seed: u64) -> Vec<Kept> {
    new_pairs_up_to(blocking, EXACT_PAIRS.max(sample as u64), sample, seed)
}

/// [`new_pairs`], counting exactly the keys with at most `exact_up_to` pairs.
fn new_pairs_up_to(blocking: &Blocking, exact_up_to: u64, sample: usize, seed: u64) -> Vec<Kept> {
    let mut rng = Rng::new(seed);
    blocking
        .keys
        .iter()
        .enumerate()
        .map(|(k, kb)| {
            kept_pairs(kb, exact_up_to, sample, &mut rng, |a, b| {
                !blocking.seen_before(k, a, b)
            })
        })
        .collect()
}

/// Keys worth trying: built from the compared attributes, each a common way to find the
/// same customer when other fields differ.
fn candidate_keys(p: &Prepared, existing: &[BlockSpec]) -> Vec<BlockSpec> {
    let compared: Vec<Attr> = p.comparison.comparators.iter().map(|c| c.attr).collect();
    let has = |a: Attr| compared.contains(&a);
    let mut texts: Vec<Vec<&str>> = Vec::new();
    let singles: &[(Attr, &[&str])] = &[
        (Attr::Email, &["email", "local_part(email)"]),
        (Attr::Phone, &["phone", "national(phone)"]),
        (Attr::BirthDate, &["birth_date"]),
        (Attr::Street, &["street"]),
    ];
    for (a, ts) in singles {
        if has(*a) {
            texts.extend(ts.iter().map(|t| vec![*t]));
        }
    }
    let combos: &[(&[Attr], &[&str])] = &[
        (
            &[Attr::FamilyName, Attr::GivenName],
            &["soundex(family_name)", "soundex(given_name)"],
        ),
        (
            &[Attr::FamilyName, Attr::BirthDate],
            &["soundex(family_name)", "birth_date"],
        ),
        (
            &[Attr::GivenName, Attr::BirthDate],
            &["initial(given_name)", "birth_date"],
        ),
        (
            &[Attr::FamilyName, Attr::Postcode],
            &["soundex(family_name)", "postcode"],
        ),
        (
            &[Attr::FamilyName, Attr::City],
            &["soundex(family_name)", "city"],
        ),
        (
            &[Attr::GivenName, Attr::Postcode],
            &["soundex(given_name)", "postcode"],
        ),
        (
            &[Attr::FamilyName, Attr::BirthDate],
            &["soundex(family_name)", "year(birth_date)"],
        ),
        (&[Attr::Street, Attr::Postcode], &["street", "postcode"]),
    ];
    for (attrs, ts) in combos {
        if attrs.iter().all(|a| has(*a)) {
            texts.push(ts.to_vec());
        }
    }
    let mut out = Vec::new();
    for t in texts {
        let Ok(keys) = t
            .iter()
            .map(|s| KeyPart::parse(s))
            .collect::<Result<Vec<KeyPart>, String>>()
        else {
            continue;
        };
        let mut sorted = keys.clone();
        sorted.sort_by_key(|k| k.to_string());
        let same = existing.iter().any(|e| {
            let mut s = e.keys.clone();
            s.sort_by_key(|k| k.to_string());
            s == sorted
        });
        if !same {
            out.push(BlockSpec {
                name: t.join(" + "),
                keys,
                any_order: t.len() == 2 && t.iter().all(|s| s.starts_with("soundex(")),
            });
        }
    }
    out
}

/// Label-free estimates from a model: confident matches per key and what candidate keys
/// would add.
struct ModelView {
    /// Confident matches among all candidate pairs.
    total: f64,
    /// Per key: confident matches it finds, and cumulatively with the keys before it.
    found: Vec<f64>,
    found_cum: Vec<f64>,
    /// Candidate keys: (spec, new candidate pairs, confident matches added), best first.
    suggestions: Vec<(BlockSpec, Count, f64)>,
    /// Candidate keys left out because their blocks are too large.
    too_large: Vec<String>,
}

fn model_view(
    spec: &samekey::spec::Spec,
    p: &Prepared,
    model: &Model,
    news: &[Kept],
    args: &Args,
) -> samekey::Result<ModelView> {
    let scorer = PairScorer::new(
        model::Scorer::new(model, &p.comparison, &p.table, &spec.blocks),
        Decider::new(spec.decide),
        p.comparison.len(),
    );
    let mut scratch = p.comparison.scratch();
    let mut confident = |key: Option<usize>, a: u32, b: u32| {
        let g = p.comparison.gamma(&p.table, a, b, &mut scratch);
        scorer.score(key, &g, a).probability >= args.confident
    };
    let n_keys = p.blocking.keys.len();
    let (mut total, mut found, mut found_cum) = (0.0, vec![0.0; n_keys], vec![0.0; n_keys]);
    for (j, kept) in news.iter().enumerate() {
        for &(a, b) in &kept.pairs {
            if !confident(Some(j), a, b) {
                continue;
            }
            total += kept.weight;
            let mut any = false;
            for (k, kb) in p.blocking.keys.iter().enumerate() {
                let hit = joins(kb, a, b);
                if hit {
                    found[k] += kept.weight;
                }
                any |= hit;
                if any {
                    found_cum[k] += kept.weight;
                }
            }
        }
    }
    let mut suggestions = Vec::new();
    let mut too_large = Vec::new();
    let mut rng = Rng::new(spec.model.seed ^ 0x9e37_79b9);
    for cand in candidate_keys(p, &spec.blocks) {
        let built = match Blocking::build(
            &p.table,
            std::slice::from_ref(&cand),
            spec.model.max_pairs_per_key,
        ) {
            Ok(b) => b,
            Err(_) => {
                too_large.push(cand.name.clone());
                continue;
            }
        };
        let kb = &built.keys[0];
        let exact_up_to = EXACT_PAIRS.max(args.sample as u64);
        let kept = kept_pairs(kb, exact_up_to, args.sample, &mut rng, |a, b| {
            !p.blocking.seen_before(n_keys, a, b)
        });
        let added: f64 = kept
            .pairs
            .iter()
            .filter(|&&(a, b)| confident(None, a, b))
            .count() as f64
            * kept.weight;
        suggestions.push((cand, kept.count, added));
    }
    suggestions.sort_by(|x, y| y.2.total_cmp(&x.2).then(x.1.value.total_cmp(&y.1.value)));
    Ok(ModelView {
        total,
        found,
        found_cum,
        suggestions,
        too_large,
    })
}

/// Run `samekey plan`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = super::values::load_spec(&args.spec)?;
    if let Some(m) = &args.model {
        super::values::input_file(m, "--model", true)?;
    }
    let truth = match &args.truth {
        Some(t) => Some(evaluate::read_truth(t)?),
        None => None,
    };
    let loaded_model = match &args.model {
        Some(m) if !args.no_model => Some(Model::load(m, &spec)?),
        _ => None,
    };
    let progress = !global.quiet && !args.json;
    let prepared = Prepared::new(
        &spec,
        PrepareOptions {
            progress,
            pair_limit: false,
            purpose: "planning",
        },
    )?;
    let p = &prepared;
    let table = &p.table;
    let entity = truth
        .as_ref()
        .map(|t| evaluate::entities_from_truth(table, t));
    let plans = block::plan(&p.blocking, entity.as_deref(), args.top);
    let news = new_pairs(&p.blocking, args.sample, spec.model.seed);
    let view = if args.no_model {
        None
    } else {
        let model = match loaded_model {
            Some(m) => m,
            None => {
                let pairs: u64 = p.tasks.iter().map(|t| p.task_pairs(t)).sum();
                let bar = Progress::bar(progress, "quick fit (count vectors)", pairs, "pairs");
                let t = model::train::train(&spec, p, &bar)?;
                bar.finish();
                t.model
            }
        };
        Some(model_view(&spec, p, &model, &news, args)?)
    };

    let n = table.len() as u64;
    let all = n * n.saturating_sub(1) / 2;
    let limit = spec.model.max_pairs_per_key;
    let total = news.iter().fold(Count::exact(0), |acc, k| {
        // Keys are sampled independently: add the values and the squared half-widths.
        let half = |c: &Count| ((c.hi - c.lo) / 2.0).powi(2);
        let h = (half(&acc) + half(&k.count)).sqrt();
        let v = acc.value + k.count.value;
        Count {
            value: v,
            lo: (v - h).max(0.0),
            hi: v + h,
            exact: acc.exact && k.count.exact,
        }
    });
    let share = |x: f64, of: f64| if of > 0.0 { Some(x / of) } else { None };
    if global.quiet {
        return Ok(());
    }
    if args.json {
        let keys: Vec<serde_json::Value> = plans
            .iter()
            .zip(&news)
            .enumerate()
            .map(|(k, (pl, nw))| {
                serde_json::json!({
                    "key": pl.name,
                    "records": pl.records_keyed,
                    "blocks": pl.blocks,
                    "pairs": pl.raw_pairs,
                    "new_pairs": nw.count.value.round(),
                    "new_pairs_low": nw.count.lo.floor(),
                    "new_pairs_high": nw.count.hi.ceil(),
                    "new_pairs_exact": nw.count.exact,
                    "completeness": pl.completeness,
                    "cumulative_completeness": pl.cumulative_completeness,
                    "confident_completeness": view.as_ref().and_then(|v| share(v.found[k], v.total)),
                    "confident_cumulative": view.as_ref().and_then(|v| share(v.found_cum[k], v.total)),
                    "over_limit": pl.raw_pairs > limit,
                    "largest_blocks": pl.largest.iter().map(|(v, n)| serde_json::json!({"value": v, "records": n})).collect::<Vec<_>>(),
                })
            })
            .collect();
        let v = serde_json::json!({
            "command": "plan",
            "records": n,
            "record_pairs": all,
            "candidate_pairs": total.value.round(),
            "candidate_pairs_low": total.lo.floor(),
            "candidate_pairs_high": total.hi.ceil(),
            "candidate_pairs_exact": total.exact,
            "reduction_ratio": 1.0 - total.value / all.max(1) as f64,
            "max_pairs_per_key": limit,
            "confident_at": args.confident,
            "confident_matches": view.as_ref().map(|v| v.total.round()),
            "keys": keys,
            "suggestions": view.as_ref().map(|v| v.suggestions.iter().map(|(s, c, added)| serde_json::json!({
                "keys": s.keys.iter().map(|k| k.to_string()).collect::<Vec<_>>(),
                "new_pairs": c.value.round(),
                "confident_matches_added": added.round(),
            })).collect::<Vec<_>>()),
        });
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!("{n} records, {all} record pairs in all\n");
    println!(
        "{:<20} {:>9} {:>8} {:>12} {:>26} {:>7} {:>7} {:>8} {:>8}",
        "key", "records", "blocks", "pairs", "new pairs", "compl.", "cum.", "conf.", "cum."
    );
    let pct = |x: Option<f64>| x.map_or("-".to_string(), |v| format!("{v:.4}"));
    for (k, (pl, nw)) in plans.iter().zip(&news).enumerate() {
        println!(
            "{:<20} {:>9} {:>8} {:>12} {:>26} {:>7} {:>7} {:>8} {:>8}{}",
            pl.name,
            pl.records_keyed,
            pl.blocks,
            pl.raw_pairs,
            nw.count.show(),
            pct(pl.completeness),
            pct(pl.cumulative_completeness),
            pct(view.as_ref().and_then(|v| share(v.found[k], v.total))),
            pct(view.as_ref().and_then(|v| share(v.found_cum[k], v.total))),
            if pl.raw_pairs > limit {
                "  OVER LIMIT"
            } else {
                ""
            }
        );
    }
    println!(
        "\ncandidate pairs: {} (reduction ratio {:.6}){}",
        total.show(),
        1.0 - total.value / all.max(1) as f64,
        if total.exact {
            ""
        } else {
            "; in brackets a 95% interval from a uniform sample of each large key's pairs"
        }
    );
    println!("compl., cum.: pair completeness per key and cumulated, from --truth");
    if let Some(v) = &view {
        println!(
            "conf., cum.: share of the {:.0} confident matches (probability >= {}) among the \
             candidate pairs that each key finds, and cumulated; an estimate without labels, \
             of the matches the keys find together",
            v.total, args.confident
        );
        if v.suggestions.iter().any(|s| s.2 >= 1.0) {
            println!("\nkeys that would add the most confident matches:");
            for (s, c, added) in v.suggestions.iter().filter(|s| s.2 >= 1.0).take(5) {
                let keys: Vec<String> = s.keys.iter().map(|k| format!("\"{k}\"")).collect();
                println!(
                    "  keys = [{}]{}: +{:.0} confident matches, +{} candidate pairs",
                    keys.join(", "),
                    if s.any_order {
                        ", any_order = true"
                    } else {
                        ""
                    },
                    added,
                    c.show()
                );
            }
        } else {
            println!("\nno key built from the compared attributes would add confident matches");
        }
        if !v.too_large.is_empty() {
            println!(
                "not tried (more pairs than model.max_pairs_per_key): {}",
                v.too_large.join(", ")
            );
        }
    }
    for p in &plans {
        let top: Vec<String> = p
            .largest
            .iter()
            .map(|(v, n)| format!("`{v}` {n}"))
            .collect();
        println!("largest blocks of {}: {}", p.name, top.join(", "));
    }
    if let Some(p) = plans.iter().find(|p| p.raw_pairs > limit) {
        println!(
            "\nkey `{}` exceeds model.max_pairs_per_key ({limit}); `link` will refuse it. Add a \
             part to the key (for example prefix(postcode, 3)) or use a longer prefix.",
            p.name
        );
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wilson_interval_covers_the_share() {
        // 50 of 100 sampled, of 1000: the interval around 500 is about +-95 (Wilson's
        // interval at p = 0.5, n = 100: 0.404..0.596, computed by hand from the formula).
        let c = Count::sampled(50, 100, 1000);
        assert_eq!(c.value, 500.0);
        assert!((c.lo - 403.8).abs() < 1.0, "{c:?}");
        assert!((c.hi - 596.2).abs() < 1.0, "{c:?}");
        let z = Count::sampled(0, 100, 1000);
        assert_eq!(z.lo, 0.0);
        assert!(z.hi > 0.0 && z.hi < 50.0, "{z:?}");
    }

    /// The blocks of a key that gives record `r` the key id `id(r)`.
    fn key(name: &str, n: u32, id: impl Fn(u32) -> u32) -> KeyBlocks {
        let key_of: Vec<u32> = (0..n).map(&id).collect();
        let blocks = key_of.iter().copied().max().map_or(0, |m| m as usize + 1);
        let mut members = Vec::new();
        let mut offsets = vec![0];
        for b in 0..blocks as u32 {
            members.extend((0..n).filter(|&r| key_of[r as usize] == b));
            offsets.push(members.len() as u32);
        }
        KeyBlocks {
            name: name.into(),
            key_of,
            offsets,
            members,
            values: (0..blocks).map(|b| b.to_string()).collect(),
        }
    }

    #[test]
    fn sampled_new_pairs_agree_with_the_exact_count() {
        // Two overlapping keys on 3000 records: residues mod 50 and mod 12. A pair of the
        // second key is new unless it also agrees mod 50, i.e. mod 300 (the least common
        // multiple): exactly 12 * C(250, 2) - 300 * C(10, 2) = 373,500 - 13,500 = 360,000 new pairs.
        let blocking = Blocking {
            keys: vec![key("a", 3000, |r| r % 50), key("b", 3000, |r| r % 12)],
        };
        let exact = new_pairs_up_to(&blocking, u64::MAX, 10_000, 7);
        assert_eq!(exact[0].count, Count::exact(50 * 1770));
        assert_eq!(exact[1].count, Count::exact(360_000));
        for seed in [1, 2, 3] {
            let sampled = new_pairs_up_to(&blocking, 0, 10_000, seed);
            let c = sampled[1].count;
            assert!(!c.exact);
            assert!(c.lo <= 360_000.0 && 360_000.0 <= c.hi, "seed {seed}: {c:?}");
            assert!(
                (c.value - 360_000.0).abs() < 0.01 * 360_000.0,
                "seed {seed}: {c:?}"
            );
            // Every pair of the first key is new: the estimate is exact in value.
            assert_eq!(sampled[0].count.value, 88_500.0);
            let weighted = sampled[1].pairs.len() as f64 * sampled[1].weight;
            assert!((weighted - c.value).abs() < 1e-6, "{weighted} {c:?}");
        }
    }
}
