//! Validation of a model file read from disk.
//!
//! In: a parsed [`Model`] and the spec it is to score with. Out: nothing, or a message
//! naming the first thing that is wrong (attribute, level, value) and what it must be.
//!
//! A model file may have been edited by hand. Everything the scorer indexes or divides by
//! is checked here, so a bad file is refused (exit 2) instead of panicking or silently
//! scoring with impossible numbers: the attributes and their levels match the spec; every
//! m and u is a probability and each set sums to 1; each weight is log2(m/u); the match
//! prior is in range.

use super::{Model, MAX_WEIGHT_DIFF, SUM_TOLERANCE};

/// Check `model` against the spec's model layout (`attr: level | level | ...` per line,
/// as [`crate::spec::Spec::model_layout`] writes it).
pub fn validate(model: &Model, layout: &str) -> Result<(), String> {
    let want: Vec<(&str, Vec<&str>)> = layout
        .lines()
        .filter(|l| !l.trim().is_empty())
        .filter_map(|l| {
            let (attr, levels) = l.split_once(": ")?;
            let levels = levels.trim_end_matches(" (value frequency)");
            Some((attr, levels.split(" | ").collect()))
        })
        .collect();
    if model.attribute.len() != want.len() {
        let have: Vec<&str> = model
            .attribute
            .iter()
            .map(|a| a.attribute.as_str())
            .collect();
        let spec: Vec<&str> = want.iter().map(|w| w.0).collect();
        return Err(format!(
            "the model has {} attribute(s) ({}), the spec compares {} ({}); fit a new model \
             with `samekey train`",
            have.len(),
            have.join(", "),
            spec.len(),
            spec.join(", ")
        ));
    }
    for (k, (a, (attr, levels))) in model.attribute.iter().zip(&want).enumerate() {
        let at = format!("attribute[{}] `{}`", k + 1, a.attribute);
        if a.attribute != *attr {
            return Err(format!(
                "{at}: the spec compares `{attr}` in this place; fit a new model with \
                 `samekey train`"
            ));
        }
        if a.levels
            .iter()
            .map(String::as_str)
            .ne(levels.iter().copied())
        {
            return Err(format!(
                "{at}: levels {:?}, the spec has {:?}; fit a new model with `samekey train`",
                a.levels, levels
            ));
        }
        let n = a.levels.len();
        if a.m.len() != n || a.u.len() != n || a.weight.len() != n {
            return Err(format!(
                "{at}: m, u and weight must have one value per level ({n})"
            ));
        }
        probabilities(&at, "m", &a.m)?;
        probabilities(&at, "u", &a.u)?;
        for (l, ((m, u), w)) in a.m.iter().zip(&a.u).zip(&a.weight).enumerate() {
            if *u <= 0.0 {
                return Err(format!(
                    "{at}: u = {u} for level `{}`; u must be above 0 (a level never seen \
                     among non-matches would weigh infinitely)",
                    a.levels[l]
                ));
            }
            let expect = (m.max(1e-12) / u).log2();
            if !w.is_finite() || (w - expect).abs() > MAX_WEIGHT_DIFF {
                return Err(format!(
                    "{at}: weight {w} for level `{}` is not log2(m/u) = {expect:.6} (m = {m}, \
                     u = {u}); a weight follows from m and u, so edit those or refit",
                    a.levels[l]
                ));
            }
        }
    }
    if !(model.lambda > 0.0 && model.lambda < 1.0) {
        return Err(format!(
            "lambda = {} must be between 0 and 1 (exclusive)",
            model.lambda
        ));
    }
    Ok(())
}

/// Every value in `0..=1` and the values summing to 1.
fn probabilities(at: &str, name: &str, values: &[f64]) -> Result<(), String> {
    if let Some(v) = values
        .iter()
        .find(|v| !(v.is_finite() && (0.0..=1.0).contains(*v)))
    {
        return Err(format!("{at}: {name} = {v} is not a probability (0 to 1)"));
    }
    let sum: f64 = values.iter().sum();
    if (sum - 1.0).abs() > SUM_TOLERANCE {
        return Err(format!(
            "{at}: the {name} values sum to {sum:.6}; over all levels they must sum to 1"
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> (Model, String) {
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
        let spec = crate::spec::Spec::load(&root.join("demo-data/spec.toml")).unwrap();
        let text = std::fs::read_to_string(root.join("models/demo.toml")).unwrap();
        (toml::from_str(&text).unwrap(), spec.model_layout())
    }

    #[test]
    fn the_committed_model_passes_and_hand_edits_are_named() {
        let (m, layout) = demo();
        validate(&m, &layout).unwrap();
        let mut bad = m.clone();
        bad.attribute[0].m[0] = 1.5;
        assert!(validate(&bad, &layout)
            .unwrap_err()
            .contains("m = 1.5 is not a probability"));
        let mut bad = m.clone();
        bad.attribute[1].u[0] = -0.2;
        assert!(validate(&bad, &layout)
            .unwrap_err()
            .contains("u = -0.2 is not a probability"));
        let mut bad = m.clone();
        bad.attribute[0].weight[0] += 1.0;
        assert!(validate(&bad, &layout)
            .unwrap_err()
            .contains("is not log2(m/u)"));
        let mut bad = m.clone();
        bad.attribute[0].attribute = "town".into();
        assert!(validate(&bad, &layout)
            .unwrap_err()
            .contains("the spec compares"));
        let mut bad = m.clone();
        bad.attribute.pop();
        assert!(validate(&bad, &layout)
            .unwrap_err()
            .contains("attribute(s)"));
        let mut bad = m.clone();
        bad.attribute[0].levels[0] = "other".into();
        assert!(validate(&bad, &layout).unwrap_err().contains("levels"));
        let mut bad = m;
        bad.lambda = 0.0;
        assert!(validate(&bad, &layout).unwrap_err().contains("lambda"));
    }
}
