//! The bad-input corpus (`tests/bad_input/cases.toml`): each case changes a fresh copy of
//! the mini data, runs a command and checks its exit code and message. All failures are
//! reported at once.

use std::path::Path;

use crate::common::*;

#[derive(serde::Deserialize)]
struct Cases {
    case: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    args: Vec<String>,
    code: i32,
    message: String,
    #[serde(default)]
    stream: Option<String>,
    #[serde(default)]
    rejects: Option<String>,
    #[serde(default)]
    edit: Vec<Edit>,
    #[serde(default)]
    write: Vec<Write>,
    #[serde(default)]
    mkdir: Vec<String>,
    #[serde(default)]
    before: Vec<Vec<String>>,
    #[serde(default)]
    model_edit: Vec<ModelEdit>,
    /// Fit the model before the edits (a model of the unedited spec).
    #[serde(default)]
    model_first: bool,
    /// Re-encode this file as Latin-1 after the edits.
    #[serde(default)]
    latin1: Option<String>,
}

#[derive(serde::Deserialize)]
struct Edit {
    file: String,
    from: String,
    to: String,
}

#[derive(serde::Deserialize)]
struct Write {
    file: String,
    #[serde(default)]
    text: Option<String>,
    #[serde(default)]
    hex: Option<String>,
}

#[derive(serde::Deserialize)]
struct ModelEdit {
    pattern: String,
    to: String,
}

fn needs_model(c: &Case) -> bool {
    c.args
        .iter()
        .chain(c.before.iter().flatten())
        .any(|a| a.contains("{model}"))
}

fn fit_model(dir: &Path) -> Result<(), String> {
    let o = run(
        &[
            "--quiet",
            "train",
            "--spec",
            dir.join("spec.toml").to_str().unwrap(),
            "--out",
            dir.join("fit").to_str().unwrap(),
        ],
        None,
    );
    if o.status.success() {
        Ok(())
    } else {
        Err(format!("train failed: {}", text(&o).1))
    }
}

fn prepare(c: &Case, dir: &Path) -> Result<(), String> {
    let fill = |s: &str| {
        s.replace("{dir}", dir.to_str().unwrap())
            .replace("{model}", dir.join("fit/model.toml").to_str().unwrap())
    };
    if needs_model(c) && c.model_first {
        fit_model(dir)?;
    }
    for m in &c.mkdir {
        std::fs::create_dir_all(dir.join(m)).map_err(|e| e.to_string())?;
    }
    for e in &c.edit {
        let p = dir.join(&e.file);
        let s = std::fs::read_to_string(&p).map_err(|e| e.to_string())?;
        if !s.contains(&e.from) {
            return Err(format!("setup: `{}` not in {}", e.from, e.file));
        }
        std::fs::write(&p, s.replacen(&e.from, &e.to, 1)).map_err(|e| e.to_string())?;
    }
    for w in &c.write {
        let bytes = match (&w.text, &w.hex) {
            (Some(t), _) => t.as_bytes().to_vec(),
            (None, Some(h)) => (0..h.len())
                .step_by(2)
                .map(|i| u8::from_str_radix(&h[i..i + 2], 16).unwrap())
                .collect(),
            _ => return Err("setup: write needs text or hex".into()),
        };
        std::fs::write(dir.join(&w.file), bytes).map_err(|e| e.to_string())?;
    }
    if let Some(f) = &c.latin1 {
        let p = dir.join(f);
        let s = std::fs::read_to_string(&p).map_err(|e| e.to_string())?;
        let bytes: Vec<u8> = s.chars().map(|ch| ch as u32 as u8).collect();
        std::fs::write(&p, bytes).map_err(|e| e.to_string())?;
    }
    if needs_model(c) && !c.model_first {
        fit_model(dir)?;
    }
    let model = dir.join("fit/model.toml");
    for m in &c.model_edit {
        let s = std::fs::read_to_string(&model).map_err(|e| e.to_string())?;
        let re = regex::Regex::new(&m.pattern).map_err(|e| e.to_string())?;
        if !re.is_match(&s) {
            return Err(format!("setup: /{}/ not in the model", m.pattern));
        }
        std::fs::write(&model, re.replace(&s, m.to.as_str()).as_ref())
            .map_err(|e| e.to_string())?;
    }
    for b in &c.before {
        let args: Vec<String> = b.iter().map(|a| fill(a)).collect();
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let o = run(&args, None);
        if !o.status.success() {
            return Err(format!("setup {:?}: {}", b, text(&o).1));
        }
    }
    Ok(())
}

fn check(c: &Case) -> Result<(), String> {
    let dir = mini_copy();
    prepare(c, dir.path())?;
    let args: Vec<String> = c
        .args
        .iter()
        .map(|a| {
            a.replace("{dir}", dir.path().to_str().unwrap()).replace(
                "{model}",
                dir.path().join("fit/model.toml").to_str().unwrap(),
            )
        })
        .collect();
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = run(&args, None);
    let (out, err) = text(&o);
    if err.contains("panicked") {
        return Err(format!("panic: {err}"));
    }
    let code = o.status.code().unwrap_or(-1);
    let shown = if c.stream.as_deref() == Some("stdout") {
        &out
    } else {
        &err
    };
    if code != c.code || !shown.contains(&c.message) {
        return Err(format!(
            "exit {code} (want {}), want `{}` in:\n{}{}",
            c.code, c.message, err, out
        ));
    }
    if let Some(r) = &c.rejects {
        let rejects = std::fs::read_to_string(dir.path().join("out/rejects.csv"))
            .map_err(|e| format!("rejects.csv: {e}"))?;
        if !rejects.contains(r.as_str()) {
            return Err(format!("want `{r}` in rejects.csv:\n{rejects}"));
        }
    }
    Ok(())
}

#[test]
fn every_bad_input_gets_its_exit_code_and_message() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_input/cases.toml");
    let cases: Cases = toml::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    assert!(
        cases.case.len() >= 60,
        "the corpus has {} cases",
        cases.case.len()
    );
    let failures: Vec<String> = cases
        .case
        .iter()
        .filter_map(|c| check(c).err().map(|e| format!("--- {}: {e}", c.name)))
        .collect();
    assert!(
        failures.is_empty(),
        "{} of {} cases failed:\n{}",
        failures.len(),
        cases.case.len(),
        failures.join("\n")
    );
}
