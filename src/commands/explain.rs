//! `samekey explain`: why two records match or not, attribute by attribute.

use std::path::PathBuf;

use samekey::model::Model;
use samekey::prepare::{PrepareOptions, Prepared};
use samekey::score::{self, Explanation};

use super::Global;

/// Arguments of `samekey explain`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// The fitted model (e.g. OUT/model.toml of a `link` run).
    #[arg(long)]
    pub model: PathBuf,
    /// Crosswalk for the records' customer keys [default: crosswalk.csv next to the
    /// model file, when there is one]; refused.csv beside it tells whether that run's
    /// guards refused the pair.
    #[arg(long)]
    pub crosswalk: Option<PathBuf>,
    /// Print the explanation as JSON.
    #[arg(long)]
    pub json: bool,
    /// First record as SOURCE:ID, e.g. crm:10482.
    #[arg(value_parser = parse_record)]
    pub a: (String, String),
    /// Second record as SOURCE:ID.
    #[arg(value_parser = parse_record)]
    pub b: (String, String),
}

fn parse_record(s: &str) -> Result<(String, String), String> {
    match s.split_once(':') {
        Some((src, id)) if !src.is_empty() && !id.is_empty() => Ok((src.into(), id.into())),
        _ => Err(format!(
            "`{s}`: write a record as SOURCE:ID, e.g. crm:10482"
        )),
    }
}

/// Run `samekey explain`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = super::values::load_spec(&args.spec)?;
    if args.a == args.b {
        return Err(samekey::Error::Usage(format!(
            "`{}:{}` was given twice; explain compares two different records",
            args.a.0, args.a.1
        ))
        .into());
    }
    let model = Model::load(&args.model, &spec)?;
    let crosswalk_path = args.crosswalk.clone().or_else(|| {
        let p = args.model.parent()?.join("crosswalk.csv");
        p.exists().then_some(p)
    });
    let crosswalk = match &crosswalk_path {
        Some(p) => Some(samekey::evaluate::read_crosswalk(p)?),
        None => None,
    };
    let prepared = Prepared::new(
        &spec,
        PrepareOptions {
            progress: !global.quiet && !args.json,
            pair_limit: false,
            purpose: "explaining",
        },
    )?;
    let e = score::explain(
        &spec,
        &model,
        &prepared,
        (&args.a.0, &args.a.1),
        (&args.b.0, &args.b.1),
        crosswalk.as_ref(),
    )?;
    // The run that wrote the crosswalk also wrote refused.csv beside it: did its guards
    // refuse this very pair?
    let refused_in_run = match crosswalk_path.as_ref().and_then(|p| p.parent()) {
        Some(dir) if dir.join("refused.csv").exists() => refused_reason(
            &dir.join("refused.csv"),
            (&args.a.0, &args.a.1),
            (&args.b.0, &args.b.1),
        )?,
        _ => None,
    };
    if global.quiet {
        return Ok(());
    }
    if args.json {
        let mut v = to_json(&e);
        v["refused_in_run"] = serde_json::json!(refused_in_run);
        println!("{}", serde_json::to_string_pretty(&v)?);
    } else {
        print!("{}", render(&e, crosswalk_path.is_some()));
        if let Some(why) = refused_in_run {
            println!("the run that wrote the crosswalk refused to merge this pair: {why}");
        }
    }
    Ok(())
}

/// The reason `refused.csv` gives for the pair of records `a` and `b` (either order).
fn refused_reason(
    path: &std::path::Path,
    a: (&str, &str),
    b: (&str, &str),
) -> samekey::Result<Option<String>> {
    let err = |e| samekey::Error::Csv {
        path: path.to_path_buf(),
        source: e,
    };
    let mut rdr = csv::Reader::from_path(path).map_err(err)?;
    let headers = rdr.headers().map_err(err)?.clone();
    let col = |name: &str| headers.iter().position(|h| h == name);
    let (Some(sa), Some(ia), Some(sb), Some(ib), Some(r)) = (
        col("source_a"),
        col("id_a"),
        col("source_b"),
        col("id_b"),
        col("reason"),
    ) else {
        return Ok(None);
    };
    for row in rdr.records() {
        let row = row.map_err(err)?;
        let x = (row.get(sa).unwrap_or(""), row.get(ia).unwrap_or(""));
        let y = (row.get(sb).unwrap_or(""), row.get(ib).unwrap_or(""));
        if (x == a && y == b) || (x == b && y == a) {
            return Ok(row.get(r).map(String::from));
        }
    }
    Ok(None)
}

/// Widest a value column may get; longer values are cut with `…`.
const VALUE_WIDTH: usize = 40;

/// `s` cut to `width` characters (with `…` when cut) and padded to `width`.
pub fn fit(s: &str, width: usize) -> String {
    let n = s.chars().count();
    if n <= width {
        format!("{s}{}", " ".repeat(width - n))
    } else {
        let mut t: String = s.chars().take(width.saturating_sub(1)).collect();
        t.push('…');
        t
    }
}

/// The explanation as text: a table of attributes, then the numbers and verdicts.
pub fn render(e: &Explanation, have_crosswalk: bool) -> String {
    use std::fmt::Write;
    let mut o = String::new();
    let [ra, rb] = &e.records;
    let key = |k: &Option<String>| match k {
        Some(k) => k.clone(),
        None if have_crosswalk => "not in the crosswalk".into(),
        None => "unknown (no crosswalk; pass --crosswalk)".into(),
    };
    let _ = writeln!(
        o,
        "a  {}:{}  customer key {}",
        ra.source,
        ra.id,
        key(&ra.customer_key)
    );
    let _ = writeln!(
        o,
        "b  {}:{}  customer key {}",
        rb.source,
        rb.id,
        key(&rb.customer_key)
    );
    // Values come last, one line per record, so that a long value never pushes the
    // other columns; values longer than VALUE_WIDTH are cut with `…`.
    let _ = writeln!(
        o,
        "\n{:<14} {:<22} {:>9}  value (raw → standardized)",
        "attribute", "level", "bits"
    );
    for a in &e.attrs {
        let side = |i: usize| {
            let raw = a.raw[i].as_deref().unwrap_or("-");
            let std = a.standardized[i].as_deref().unwrap_or("-");
            format!(
                "{}  {} → {}",
                ["a", "b"][i],
                fit(raw, VALUE_WIDTH).trim_end(),
                fit(std, VALUE_WIDTH).trim_end()
            )
        };
        let _ = writeln!(
            o,
            "{} {} {:>+9.4}  {}",
            fit(&a.attribute, 14),
            fit(&a.level, 22),
            a.bits,
            side(0)
        );
        let _ = writeln!(o, "{:<14} {:<22} {:>9}  {}", "", "", "", side(1));
    }
    let fit_used = match &e.fit {
        Some(k) => format!(
            "the model of blocking key `{k}` (its prior; the attributes it is built from weigh by their levels among its pairs)"
        ),
        None => "the combined model".to_string(),
    };
    let _ = writeln!(
        o,
        "\nscored with {fit_used}: λ = {:.4e}, prior {:+.4} bits",
        e.lambda, e.prior
    );
    let _ = writeln!(
        o,
        "evidence {:+.4} bits (sum of the bits above); prior + evidence = {:+.4} bits",
        e.evidence,
        e.prior + e.evidence
    );
    let _ = writeln!(
        o,
        "probability {:.6}; decision {} ({})",
        e.probability,
        e.decision.name(),
        e.decider.describe()
    );
    if e.blocked_by.is_empty() {
        let _ = writeln!(
            o,
            "no blocking key puts these records together, so a run never compares them"
        );
    } else {
        let _ = writeln!(
            o,
            "compared in a run through blocking key(s): {}",
            e.blocked_by.join(", ")
        );
    }
    match &e.refused_by_guard {
        Some(why) => {
            let _ = writeln!(o, "a clustering guard refuses to merge them: {why}");
        }
        None => {
            let _ = writeln!(o, "no clustering guard refuses to merge these two records");
        }
    }
    o
}

/// The explanation as a JSON value.
pub fn to_json(e: &Explanation) -> serde_json::Value {
    use serde_json::json;
    let rec = |r: &score::ExplainedRecord| json!({"source": r.source, "id": r.id, "customer_key": r.customer_key});
    json!({
        "records": [rec(&e.records[0]), rec(&e.records[1])],
        "attributes": e.attrs.iter().map(|a| json!({
            "attribute": a.attribute,
            "raw_a": a.raw[0],
            "raw_b": a.raw[1],
            "standardized_a": a.standardized[0],
            "standardized_b": a.standardized[1],
            "level": a.level,
            "bits": a.bits,
        })).collect::<Vec<_>>(),
        "fit": e.fit.as_ref().map_or("combined".to_string(), |k| format!("key:{k}")),
        "lambda": e.lambda,
        "prior_bits": e.prior,
        "evidence_bits": e.evidence,
        "probability": e.probability,
        "decision": e.decision.name(),
        "match_at": e.decider.match_at(),
        "review_at": e.decider.review_at(),
        "blocked_by": e.blocked_by,
        "refused_by_guard": e.refused_by_guard,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_values_are_cut_and_short_ones_padded() {
        assert_eq!(fit("abc", 5), "abc  ");
        assert_eq!(fit("abcdefgh", 5), "abcd…");
        assert_eq!(fit("Müller", 6), "Müller");
        assert_eq!(fit("Müllerstraße", 6).chars().count(), 6);
    }

    #[test]
    fn finds_the_refusal_of_a_pair_in_either_order() {
        let dir = std::env::temp_dir().join(format!("samekey-refused-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join("refused.csv");
        std::fs::write(
            &p,
            "source_a,id_a,source_b,id_b,evidence_bits,reason\n\
             crm,c1,crm,c2,12.5000,two records of a source with one record per customer\n",
        )
        .unwrap();
        let why = refused_reason(&p, ("crm", "c2"), ("crm", "c1")).unwrap();
        assert_eq!(
            why.as_deref(),
            Some("two records of a source with one record per customer")
        );
        assert_eq!(
            refused_reason(&p, ("crm", "c1"), ("shop", "s1")).unwrap(),
            None
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
