//! Explain: two records in, everything that decides their pair out — raw and
//! standardized values, the level and bits of every compared attribute, the fit and
//! prior used, the evidence, probability and decision, the blocking keys that compare
//! the pair, whether a clustering guard would refuse the merge, and each record's
//! customer key (from a crosswalk, when one is given).

use std::collections::HashMap;

use crate::cluster::SpecGuards;
use crate::decide::{Decider, Decision};
use crate::error::{Error, Result};
use crate::evaluate::Grouping;
use crate::model::{Model, Scorer};
use crate::prepare::Prepared;
use crate::record::Attr;
use crate::sources;
use crate::spec::Spec;

use super::PairScorer;

/// One record of an explained pair.
#[derive(Debug, Clone, PartialEq)]
pub struct ExplainedRecord {
    /// Source name.
    pub source: String,
    /// Source id.
    pub id: String,
    /// Its customer key in the crosswalk given, if any.
    pub customer_key: Option<String>,
}

/// One attribute's part in an explanation.
#[derive(Debug, Clone, PartialEq)]
pub struct ExplainedAttr {
    /// Attribute name.
    pub attribute: String,
    /// Raw values of the two records as written in their files (for a given or family
    /// name read from a full-name column, the full name).
    pub raw: [Option<String>; 2],
    /// Standardized values of the two records.
    pub standardized: [Option<String>; 2],
    /// Level reached (`missing` when a side has no value).
    pub level: String,
    /// Bits of evidence added.
    pub bits: f64,
}

/// Why two records get the decision they get.
#[derive(Debug, Clone, PartialEq)]
pub struct Explanation {
    /// The two records.
    pub records: [ExplainedRecord; 2],
    /// Per compared attribute.
    pub attrs: Vec<ExplainedAttr>,
    /// Evidence: the sum of the attributes' bits.
    pub evidence: f64,
    /// Prior: log2 prior odds of the fit that scored the pair.
    pub prior: f64,
    /// Probability from prior and evidence.
    pub probability: f64,
    /// The decision at the spec's thresholds.
    pub decision: Decision,
    /// Which fit scored the pair: the name of the blocking key whose own fit was used,
    /// or `None` for the combined model.
    pub fit: Option<String>,
    /// λ of that fit.
    pub lambda: f64,
    /// The decision thresholds.
    pub decider: Decider,
    /// Names of the blocking keys that put the two records in one block; the first is
    /// the one that produces the pair in a run.
    pub blocked_by: Vec<String>,
    /// The reason a clustering guard would refuse to merge the two records, if one would.
    pub refused_by_guard: Option<String>,
}

/// Explain the pair of records `a` and `b` (source name, id) of `prepared` under `model`;
/// `crosswalk` (if given) supplies the customer keys.
pub fn explain(
    spec: &Spec,
    model: &Model,
    prepared: &Prepared,
    a: (&str, &str),
    b: (&str, &str),
    crosswalk: Option<&Grouping>,
) -> Result<Explanation> {
    if a == b {
        return Err(Error::Usage(format!(
            "`{}:{}` was given twice; explain compares two different records",
            a.0, a.1
        )));
    }
    let find = |(src, id): (&str, &str)| {
        if spec.source_index(src).is_none() {
            let names: Vec<&str> = spec.sources.iter().map(|s| s.name.as_str()).collect();
            return Err(Error::Usage(format!(
                "`{src}` is not a source of this spec; the sources are {}",
                names.join(", ")
            )));
        }
        prepared.find(src, id).ok_or_else(|| {
            Error::Usage(format!(
                "no record `{id}` in source `{src}` (or its row was rejected)"
            ))
        })
    };
    let (ra, rb) = (find(a)?, find(b)?);
    let (table, comparison) = (&prepared.table, &prepared.comparison);
    let scorer = PairScorer::new(
        Scorer::new(model, comparison, table, &spec.blocks),
        Decider::new(spec.decide),
        comparison.len(),
    );
    let joining = prepared.keys_joining(ra, rb);
    // The pair is scored as the first blocking key that produces it would score it.
    let key = joining.first().copied();
    let g = comparison.gamma(table, ra, rb, &mut comparison.scratch());
    let p = scorer.score_pair(key, ra, rb, g);
    let raw = [raw_of(spec, a)?, raw_of(spec, b)?];
    let raw_value = |side: usize, attr: Attr| -> Option<String> {
        let m = &raw[side];
        m.get(&attr)
            .or_else(|| match attr {
                Attr::GivenName | Attr::FamilyName => m.get(&Attr::FullName),
                _ => None,
            })
            .filter(|v| !v.is_empty())
            .cloned()
    };
    let attrs = comparison
        .comparators
        .iter()
        .enumerate()
        .map(|(k, c)| ExplainedAttr {
            attribute: c.attr.name().to_string(),
            raw: [raw_value(0, c.attr), raw_value(1, c.attr)],
            standardized: [
                table.get(ra as usize, c.attr).map(String::from),
                table.get(rb as usize, c.attr).map(String::from),
            ],
            level: c.level_name(g[k]).to_string(),
            bits: p.bits[k],
        })
        .collect();
    let local_fit = key.and_then(|k| {
        let name = &spec.blocks[k].name;
        model.keys.iter().find(|f| &f.name == name)
    });
    let guards = SpecGuards::new(spec, table, comparison);
    let record = |(src, id): (&str, &str)| ExplainedRecord {
        source: src.to_string(),
        id: id.to_string(),
        customer_key: crosswalk.and_then(|cw| {
            cw.position(src, id)
                .and_then(|pos| cw.group_of(pos))
                .map(String::from)
        }),
    };
    Ok(Explanation {
        records: [record(a), record(b)],
        attrs,
        evidence: p.scored.evidence,
        prior: p.scored.prior,
        probability: p.scored.probability,
        decision: p.scored.decision,
        fit: local_fit.map(|f| f.name.clone()),
        lambda: local_fit.map_or(model.lambda, |f| f.lambda),
        decider: *scorer.decider(),
        blocked_by: joining
            .iter()
            .map(|&k| prepared.blocking.keys[k].name.clone())
            .collect(),
        refused_by_guard: guards
            .refuses_pair(table, ra, rb)
            .map(|r| r.reason(&guards.unique_names)),
    })
}

/// The raw mapped values of a record, by attribute.
fn raw_of(spec: &Spec, (src, id): (&str, &str)) -> Result<HashMap<Attr, String>> {
    let Some(i) = spec.source_index(src) else {
        return Ok(HashMap::new());
    };
    Ok(sources::raw_values(&spec.sources[i], id)?
        .unwrap_or_default()
        .into_iter()
        .collect())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::prepare::PrepareOptions;

    fn setup() -> (Spec, Prepared, Model) {
        let spec = crate::testdata::mini_spec();
        let prepared = Prepared::new(&spec, PrepareOptions::default()).unwrap();
        let model = crate::model::train::train(&spec, &prepared, &crate::util::Progress::hidden())
            .unwrap()
            .model;
        (spec, prepared, model)
    }

    #[test]
    fn explains_values_bits_fit_and_keys() {
        let (mut spec, prepared, model) = setup();
        let cw = Grouping::from_rows([
            ("crm", "c1", "SK-0000-0000-0001"),
            ("shop", "s1", "SK-0000-0000-0001"),
        ])
        .unwrap();
        let e = explain(
            &spec,
            &model,
            &prepared,
            ("crm", "c1"),
            ("shop", "s1"),
            Some(&cw),
        )
        .unwrap();
        assert_eq!(e.blocked_by, ["postcode", "email"]);
        assert_eq!(
            e.records[0].customer_key.as_deref(),
            Some("SK-0000-0000-0001")
        );
        let dob = e
            .attrs
            .iter()
            .find(|a| a.attribute == "birth_date")
            .unwrap();
        // tests/data/mini: crm writes 03/14/1985, the shop 14.03.1985.
        assert_eq!(dob.raw[0].as_deref(), Some("03/14/1985"));
        assert_eq!(dob.raw[1].as_deref(), Some("14.03.1985"));
        assert_eq!(dob.standardized[0], dob.standardized[1]);
        assert_eq!(dob.level, "exact");
        let family = e
            .attrs
            .iter()
            .find(|a| a.attribute == "family_name")
            .unwrap();
        assert_eq!(family.raw[1].as_deref(), Some("Berglund, Anna"));
        let sum: f64 = e.attrs.iter().map(|a| a.bits).sum();
        assert!((sum - e.evidence).abs() < 1e-9);
        assert_eq!(
            e.probability,
            1.0 / (1.0 + (-(e.prior + e.evidence)).exp2())
        );
        assert_eq!(e.refused_by_guard, None);
        // With one record per crm customer, two crm records are refused by a guard.
        spec.cluster.one_record_per_source = vec![0];
        let e = explain(&spec, &model, &prepared, ("crm", "c1"), ("crm", "c2"), None).unwrap();
        assert!(e.refused_by_guard.is_some(), "{e:?}");
        assert_eq!(e.records[1].customer_key, None);
    }

    #[test]
    fn the_same_record_twice_is_an_error() {
        let (spec, prepared, model) = setup();
        let err =
            explain(&spec, &model, &prepared, ("crm", "c1"), ("crm", "c1"), None).unwrap_err();
        assert!(err.is_bad_input());
        assert!(err.to_string().contains("twice"), "{err}");
    }
}
