//! The run summary printed by `link` and `demo`.

use samekey::record::Attr;
use samekey::summary::RunSummary;

/// Print what a run did, in the order the stages ran.
pub fn print(s: &RunSummary, timings: bool) {
    println!("Sources");
    println!(
        "  {:<16} {:>10} {:>10} {:>10}",
        "source", "rows", "records", "rejected"
    );
    for r in &s.sources {
        println!(
            "  {:<16} {:>10} {:>10} {:>10}",
            r.name, r.rows, r.accepted, r.rejected
        );
    }
    let rejected: u64 = s.sources.iter().map(|r| r.rejected).sum();
    if rejected > 0 {
        println!("  {rejected} row(s) rejected: see rejects.csv for line and reason");
    }
    let fixes: Vec<String> = Attr::ALL
        .iter()
        .filter_map(|a| {
            let st = s.std_stats.attrs[a.index()];
            (st.present > 0 && (st.repaired > 0 || st.invalid > 0))
                .then(|| format!("{a}: {} repaired, {} invalid", st.repaired, st.invalid))
        })
        .collect();
    if !fixes.is_empty() {
        println!("  standardize: {}", fixes.join("; "));
    }
    for line in samekey::standardize::summary_lines(&s.std_stats) {
        println!("  {line}");
    }
    println!("\nBlocking ({} records)", s.records);
    println!(
        "  {:<20} {:>12} {:>12} {:>8} {:>8}",
        "key", "pairs", "new pairs", "blocks", "largest"
    );
    for k in &s.keys {
        println!(
            "  {:<20} {:>12} {:>12} {:>8} {:>8}",
            k.name, k.raw_pairs, k.new_pairs, k.blocks, k.largest_block
        );
    }
    let n = s.records as u64;
    let all = n * n.saturating_sub(1) / 2;
    let cand = s.candidate_pairs();
    println!(
        "  candidate pairs: {cand} of {all} record pairs (reduction ratio {:.6})",
        1.0 - cand as f64 / all.max(1) as f64
    );
    println!("\nModel");
    if s.fitted {
        let f = &s.model.fit;
        println!(
            "  fitted without labels: match prior λ = {:.4} among candidate pairs ({:.1} \
             expected matches), {} latent classes, {} EM iterations",
            s.model.lambda,
            s.model.expected_matches,
            f.classes.len(),
            s.model.iterations(),
        );
        for c in &f.choices {
            println!(
                "    {} classes: BIC {:.1}{}",
                c.classes,
                c.bic,
                if !c.separated {
                    " (classes not separated)"
                } else if c.classes == f.classes.len() {
                    " (chosen)"
                } else {
                    ""
                }
            );
        }
        println!(
            "  same-person classes decided by disagreement on {}",
            if f.identifying.is_empty() {
                "all attributes".to_string()
            } else {
                f.identifying.join(", then ")
            }
        );
        for (i, c) in f.classes.iter().enumerate() {
            let dis: Vec<String> = s
                .model
                .attribute
                .iter()
                .zip(&c.disagree)
                .map(|(a, d)| format!("{} {:.2}", a.attribute, d))
                .collect();
            println!(
                "    class {}: share {:.4}, {}; P(disagree): {}",
                i + 1,
                c.share,
                if c.same_person {
                    "same person"
                } else {
                    "not the same person"
                },
                dis.join(", ")
            );
        }
    } else {
        println!("  loaded: match prior λ = {:.3e}", s.model.lambda);
    }
    for w in &s.model.warnings {
        println!("  warning: {w}");
    }
    println!("  thresholds: {}", s.decider.describe());
    println!(
        "  estimated at the match threshold (from the model, no labels): precision {:.4}, \
         recall {:.4} of the candidates' matches",
        s.estimate.precision, s.estimate.recall
    );
    println!("\nDecisions");
    println!(
        "  match {}   review {}   non_match {}",
        s.decisions[0], s.decisions[1], s.decisions[2]
    );
    println!(
        "  customers found: {} (from {} records)",
        s.customers, s.records
    );
    if s.refused_merges > 0 {
        println!("  merges refused by guards: {}", s.refused_merges);
    }
    if timings {
        println!();
        print_timings(&s.timings);
    }
    println!("\nOutputs (run {})", s.run_id);
    for p in &s.outputs {
        println!("  {}", p.display());
    }
}

/// With a truth file: actual quality next to the model's estimates, then the
/// clustering scores.
pub fn print_actual(
    truth_path: &std::path::Path,
    out: &std::path::Path,
    s: &RunSummary,
    all_pairs: bool,
    global: super::Global,
) -> anyhow::Result<()> {
    use samekey::evaluate;
    let truth = evaluate::read_truth(truth_path)?;
    let crosswalk = evaluate::read_crosswalk(out.join("crosswalk.csv"))?;
    let mut metrics = evaluate::evaluate(&truth, &crosswalk);
    let pairs_file = out.join("pairs.csv");
    // With `--pairs linked`, pairs.csv holds only the match and review pairs: the
    // candidate pairs (reduction ratio, pair completeness, recall among candidates) are
    // not known from it.
    let decisions = evaluate::decision_metrics(&pairs_file, &truth)?;
    if all_pairs {
        let pairs = evaluate::read_pairs(&pairs_file, &truth)?;
        metrics.blocking = Some(evaluate::blocking_metrics(&truth, &pairs));
    }
    if global.quiet {
        return Ok(());
    }
    println!(
        "\nEvaluation against {} (truth is not used in fitting)",
        truth_path.display()
    );
    println!("  match decisions on candidate pairs   estimated   actual");
    println!(
        "    precision                          {:>9.4}   {:>6.4}",
        s.estimate.precision, decisions.precision
    );
    if all_pairs {
        println!(
            "    recall (of candidates' matches)    {:>9.4}   {:>6.4}",
            s.estimate.recall, decisions.recall
        );
    } else {
        println!(
            "    recall (of candidates' matches)    {:>9.4}   n/a",
            s.estimate.recall
        );
        println!(
            "  pairs.csv holds only linked pairs (--pairs linked): recall among candidates, \
             reduction ratio and pair completeness need `--pairs all`"
        );
    }
    for w in super::evaluate::warnings(&metrics) {
        println!("  warning: {w}");
    }
    print!("{}", super::evaluate::render_table(&metrics));
    Ok(())
}

/// The time spent per stage, as a table.
pub fn print_timings(t: &samekey::util::Timings) {
    println!("Timings");
    for (stage, d) in &t.stages {
        println!("  {:<24} {:>9.3} s", stage, d.as_secs_f64());
    }
    let total: f64 = t.stages.iter().map(|(_, d)| d.as_secs_f64()).sum();
    println!("  {:<24} {:>9.3} s", "total", total);
    if let Some(cpu) = t.process_cpu.filter(|c| !c.is_zero()) {
        let std = t.standardize_cpu.as_secs_f64();
        println!("CPU time (all threads)");
        println!("  {:<24} {:>9.3} s", "run", cpu.as_secs_f64());
        println!(
            "  {:<24} {:>9.3} s  ({:.0}% of the run)",
            "standardizing values",
            std,
            100.0 * std / cpu.as_secs_f64()
        );
    }
}
