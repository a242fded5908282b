//! `samekey evaluate`: score a crosswalk (and candidate pairs) against a truth file.
//!
//! Prints a table (or JSON with `--json`) on stdout; warnings about records found in
//! only one file go to stderr. Bad input exits with code 2.

use std::io::Write;
use std::path::PathBuf;

use samekey::evaluate::{self, Metrics, RecordRef, Scores};

use super::Global;

/// Arguments of `samekey evaluate`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Truth file: CSV with header `source,source_id,entity_id`.
    #[arg(long, value_name = "FILE")]
    pub truth: PathBuf,
    /// Crosswalk to score: CSV with header `source,source_id,customer_key`.
    #[arg(long, value_name = "FILE")]
    pub crosswalk: PathBuf,
    /// Candidate pairs (columns `source_a,id_a,source_b,id_b`): adds blocking
    /// pair completeness and reduction ratio.
    #[arg(long, value_name = "FILE")]
    pub pairs: Option<PathBuf>,
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
}

/// Run `samekey evaluate`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let metrics = compute(args)?;
    if global.quiet {
        return Ok(());
    }
    for w in warnings(&metrics) {
        eprintln!("warning: {w}");
    }
    let text = if args.json {
        serde_json::to_string_pretty(&to_json(&metrics))? + "\n"
    } else {
        render_table(&metrics)
    };
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// Read the files and score them.
fn compute(args: &Args) -> samekey::Result<Metrics> {
    let truth = evaluate::read_truth(&args.truth)?;
    if truth.is_empty() {
        return Err(samekey::Error::input(
            &args.truth,
            "the truth file has no records; add rows under the header \
             `source,source_id,entity_id`",
        ));
    }
    let crosswalk = evaluate::read_crosswalk(&args.crosswalk)?;
    let mut metrics = evaluate::evaluate(&truth, &crosswalk);
    if metrics.missing_from_crosswalk == metrics.records {
        return Err(samekey::Error::input(
            &args.crosswalk,
            format!(
                "none of the {} truth records is in the crosswalk; are the files from \
                 the same data (same `source` names and ids)?",
                metrics.records
            ),
        ));
    }
    if let Some(path) = &args.pairs {
        let pairs = evaluate::read_pairs(path, &truth)?;
        metrics.blocking = Some(evaluate::blocking_metrics(&truth, &pairs));
    }
    Ok(metrics)
}

fn examples(recs: &[RecordRef]) -> String {
    recs.iter()
        .map(|r| format!("`{r}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Warnings about records found in only one file or odd pair rows.
pub fn warnings(m: &Metrics) -> Vec<String> {
    let mut w = Vec::new();
    if m.missing_from_crosswalk > 0 {
        w.push(format!(
            "{} truth records are not in the crosswalk and were scored as unlinked, \
             e.g. {}",
            m.missing_from_crosswalk,
            examples(&m.missing_from_crosswalk_examples)
        ));
    }
    if m.missing_from_truth > 0 {
        w.push(format!(
            "{} crosswalk records are not in the truth file and were not scored, e.g. {}",
            m.missing_from_truth,
            examples(&m.missing_from_truth_examples)
        ));
    }
    if let Some(b) = &m.blocking {
        if b.unknown_record_rows > 0 {
            w.push(format!(
                "{} pair rows name records that are not in the truth file and were \
                 skipped, e.g. {}",
                b.unknown_record_rows,
                examples(&b.unknown_examples)
            ));
        }
        if b.duplicate_rows > 0 {
            w.push(format!(
                "{} pair rows repeat an earlier pair and were counted once",
                b.duplicate_rows
            ));
        }
        if b.self_pair_rows > 0 {
            w.push(format!(
                "{} pair rows pair a record with itself and were skipped",
                b.self_pair_rows
            ));
        }
    }
    w
}

fn score_row(name: &str, s: &Scores) -> String {
    format!(
        "{name:<22}{:>10.6}{:>10.6}{:>10.6}\n",
        s.precision, s.recall, s.f1
    )
}

/// The readable report.
pub fn render_table(m: &Metrics) -> String {
    let p = &m.pairwise;
    let mut t = String::new();
    t += &format!(
        "{:<22}{:>10}{:>10}{:>10}\n",
        "", "precision", "recall", "F1"
    );
    t += &score_row("pairwise", &p.scores);
    t += &score_row("B-cubed", &m.bcubed);
    t += "\n";
    t += &format!(
        "{:<22}{:.6}\n",
        "adjusted Rand index", m.adjusted_rand_index
    );
    t += &format!(
        "{:<22}{} (true entities {}, predicted {})\n",
        "records", m.records, m.true_entities, m.predicted_entities
    );
    t += &format!(
        "{:<22}true {}, predicted {}, both {}\n",
        "linked pairs", p.true_pairs, p.predicted_pairs, p.true_positives
    );
    if m.missing_from_crosswalk + m.missing_from_truth > 0 {
        t += &format!(
            "{:<22}{} truth records not in crosswalk, {} crosswalk records not in truth\n",
            "unmatched records", m.missing_from_crosswalk, m.missing_from_truth
        );
    }
    if let Some(b) = &m.blocking {
        t += "\n";
        t += &format!(
            "{:<22}{:.6} ({} of {} true pairs among the candidates)\n",
            "pair completeness", b.pair_completeness, b.true_pairs_found, b.true_pairs
        );
        t += &format!(
            "{:<22}{:.6} ({} candidate pairs of {})\n",
            "reduction ratio", b.reduction_ratio, b.candidate_pairs, b.all_pairs
        );
        t += &format!("{:<22}{:.6}\n", "pair quality", b.pair_quality);
    }
    t
}

fn scores_json(s: &Scores) -> serde_json::Value {
    serde_json::json!({"precision": s.precision, "recall": s.recall, "f1": s.f1})
}

fn refs_json(recs: &[RecordRef]) -> serde_json::Value {
    recs.iter()
        .map(|r| serde_json::json!({"source": r.source, "source_id": r.source_id}))
        .collect()
}

/// The same content as the table, as JSON.
fn to_json(m: &Metrics) -> serde_json::Value {
    let p = &m.pairwise;
    let blocking = m.blocking.as_ref().map(|b| {
        serde_json::json!({
            "pair_completeness": b.pair_completeness,
            "reduction_ratio": b.reduction_ratio,
            "pair_quality": b.pair_quality,
            "candidate_pairs": b.candidate_pairs,
            "all_pairs": b.all_pairs,
            "true_pairs": b.true_pairs,
            "true_pairs_found": b.true_pairs_found,
            "rows": b.rows,
            "duplicate_rows": b.duplicate_rows,
            "self_pair_rows": b.self_pair_rows,
            "unknown_record_rows": b.unknown_record_rows,
        })
    });
    serde_json::json!({
        "records": m.records,
        "true_entities": m.true_entities,
        "predicted_entities": m.predicted_entities,
        "missing_from_crosswalk": m.missing_from_crosswalk,
        "missing_from_crosswalk_examples": refs_json(&m.missing_from_crosswalk_examples),
        "missing_from_truth": m.missing_from_truth,
        "missing_from_truth_examples": refs_json(&m.missing_from_truth_examples),
        "pairwise": {
            "precision": p.scores.precision,
            "recall": p.scores.recall,
            "f1": p.scores.f1,
            "true_pairs": p.true_pairs,
            "predicted_pairs": p.predicted_pairs,
            "true_positives": p.true_positives,
        },
        "bcubed": scores_json(&m.bcubed),
        "adjusted_rand_index": m.adjusted_rand_index,
        "blocking": blocking,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::commands::{status_of, ExitStatus};
    use samekey::evaluate::Grouping;

    fn metrics() -> Metrics {
        let truth = Grouping::from_rows([
            ("crm", "1", "A"),
            ("crm", "2", "A"),
            ("web", "1", "B"),
            ("web", "2", "C"),
        ])
        .unwrap();
        let cw = Grouping::from_rows([
            ("crm", "1", "K1"),
            ("crm", "2", "K1"),
            ("web", "1", "K1"),
            ("shop", "5", "K9"),
        ])
        .unwrap();
        evaluate::evaluate(&truth, &cw)
    }

    #[test]
    fn table_shows_scores_and_counts() {
        let t = render_table(&metrics());
        // Pairs: true {crm1-crm2}; predicted {crm1-crm2, crm1-web1, crm2-web1}.
        assert!(
            t.contains("pairwise                0.333333  1.000000  0.500000"),
            "{t}"
        );
        assert!(t.contains("records               4 (true entities 3, predicted 2)"));
        assert!(t.contains("1 truth records not in crosswalk, 1 crosswalk records"));
        assert!(!t.contains("pair completeness"));
    }

    #[test]
    fn json_has_the_same_numbers() {
        let j = to_json(&metrics());
        assert_eq!(j["pairwise"]["true_positives"], 1);
        assert_eq!(j["pairwise"]["predicted_pairs"], 3);
        assert_eq!(j["missing_from_truth_examples"][0]["source"], "shop");
        assert!(j["blocking"].is_null());
        let w = warnings(&metrics());
        assert_eq!(w.len(), 2);
        assert!(w[0].contains("e.g. `web/2`"), "{w:?}");
    }

    #[test]
    fn bad_input_maps_to_exit_code_2() {
        let dir = tempfile::tempdir().unwrap();
        let truth = dir.path().join("truth.csv");
        let cw = dir.path().join("cw.csv");
        std::fs::write(&truth, "source,source_id,entity_id\ncrm,1,A\n").unwrap();
        std::fs::write(&cw, "source,source_id,key\ncrm,1,K\n").unwrap();
        let args = Args {
            truth: truth.clone(),
            crosswalk: cw.clone(),
            pairs: None,
            json: false,
        };
        let global = Global { quiet: true };
        let err = run(&args, global).unwrap_err();
        assert_eq!(status_of(&err), ExitStatus::BadInput);
        assert!(format!("{err:#}").contains("missing column `customer_key`"));
        // No record in common.
        std::fs::write(&cw, "source,source_id,customer_key\nweb,1,K\n").unwrap();
        let err = run(&args, global).unwrap_err();
        assert_eq!(status_of(&err), ExitStatus::BadInput);
        assert!(format!("{err:#}").contains("none of the 1 truth records"));
        // Missing file.
        let args = Args {
            truth: dir.path().join("nope.csv"),
            ..args
        };
        assert_eq!(
            status_of(&run(&args, global).unwrap_err()),
            ExitStatus::BadInput
        );
    }
}
