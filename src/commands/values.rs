//! Parsers for numeric command-line values, so that a negative or out-of-range number is
//! answered with the allowed range (exit 2) rather than a parse error about a dash.
//!
//! Use with `#[arg(allow_negative_numbers = true, value_parser = ...)]`: without
//! `allow_negative_numbers`, `-1` is taken for an unknown flag.

/// A whole number `>= 0`.
pub fn count(s: &str) -> Result<usize, String> {
    whole(s, 0)
}

/// A whole number `>= 1`.
pub fn positive(s: &str) -> Result<usize, String> {
    whole(s, 1)
}

/// A seed: any whole number from 0 to 2^64 - 1.
pub fn seed(s: &str) -> Result<u64, String> {
    let t = s.trim();
    if t.starts_with('-') && t[1..].parse::<u64>().is_ok() {
        return Err(format!(
            "`{s}` is out of range: give a whole number from 0 to {}",
            u64::MAX
        ));
    }
    t.parse::<u64>().map_err(|_| {
        format!(
            "`{s}` is not a whole number: give one from 0 to {}",
            u64::MAX
        )
    })
}

/// A fraction strictly between 0 and 1, e.g. `0.99`.
pub fn open_fraction(s: &str) -> Result<f64, String> {
    let v: f64 = s.trim().parse().map_err(|_| {
        format!("`{s}` is not a number: give one strictly between 0 and 1, e.g. 0.99")
    })?;
    if !(v > 0.0 && v < 1.0) {
        return Err(format!(
            "`{s}` is out of range: give a number strictly between 0 and 1, e.g. 0.99"
        ));
    }
    Ok(v)
}

fn whole(s: &str, min: usize) -> Result<usize, String> {
    let t = s.trim();
    if let Some(rest) = t.strip_prefix('-') {
        if rest.parse::<u128>().is_ok() {
            return Err(format!(
                "`{s}` is out of range: give a whole number of at least {min}"
            ));
        }
    }
    let v: usize = t
        .parse()
        .map_err(|_| format!("`{s}` is not a whole number: give one of at least {min}"))?;
    if v < min {
        return Err(format!(
            "`{s}` is out of range: give a whole number of at least {min}"
        ));
    }
    Ok(v)
}

/// Check an input file given as `what` (e.g. `--spec`) before any work: it exists, is a
/// file (not a folder), and, when `text` is set, holds text rather than binary bytes.
pub fn input_file(path: &std::path::Path, what: &str, text: bool) -> Result<(), samekey::Error> {
    use samekey::Error;
    let m = std::fs::metadata(path).map_err(|e| {
        Error::Usage(format!(
            "{what} `{}` cannot be read ({e}); check the path",
            path.display()
        ))
    })?;
    if m.is_dir() {
        return Err(Error::Usage(format!(
            "{what} `{}` is a folder; give the path of a file",
            path.display()
        )));
    }
    if text {
        use std::io::Read;
        let mut head = Vec::with_capacity(8192);
        let f = std::fs::File::open(path).map_err(|e| {
            Error::Usage(format!(
                "{what} `{}` cannot be read ({e}); check the path",
                path.display()
            ))
        })?;
        let _ = f.take(8192).read_to_end(&mut head);
        if head.contains(&0) {
            return Err(Error::Usage(format!(
                "{what} `{}` is a binary file, not text (TOML or CSV); check the path",
                path.display()
            )));
        }
    }
    Ok(())
}

/// Load the spec given as `--spec` after checking that it is a text file.
pub fn load_spec(path: &std::path::Path) -> anyhow::Result<samekey::spec::Spec> {
    input_file(path, "--spec", true)?;
    Ok(samekey::spec::Spec::load(path)?)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges() {
        assert_eq!(count("0"), Ok(0));
        assert!(count("-1").unwrap_err().contains("out of range"));
        assert!(positive("0").unwrap_err().contains("out of range"));
        assert!(count("x").unwrap_err().contains("not a whole number"));
        assert!(seed("-3").unwrap_err().contains("out of range"));
        assert_eq!(seed("18446744073709551615"), Ok(u64::MAX));
        assert_eq!(open_fraction("0.99"), Ok(0.99));
        for bad in ["-0.5", "0", "1", "1.5", "NaN", "inf"] {
            assert!(
                open_fraction(bad).unwrap_err().contains("out of range"),
                "{bad}"
            );
        }
    }
}
