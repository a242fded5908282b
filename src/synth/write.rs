//! Writing a generated [`Dataset`] to a folder.
//!
//! In: a dataset and a folder. Out: `crm_contacts.csv`, `webshop_accounts.csv`,
//! `support_tickets.csv`, `truth.csv` (`source,source_id,entity_id`) and `spec.toml`
//! (a linkage spec for the three files), and a [`Summary`] of what was written.

use std::fmt;
use std::path::{Path, PathBuf};

use super::{Dataset, NoiseKind, NoiseStats, Source};
use crate::csvio::CsvWriter;
use crate::Error;

/// What [`write_dataset`] wrote.
#[derive(Debug, Clone)]
pub struct Summary {
    /// Output folder.
    pub dir: PathBuf,
    /// Records per source, in [`Source::ALL`] order.
    pub records: Vec<(Source, usize)>,
    /// Distinct customers (entities) in the truth.
    pub entities: usize,
    /// Files written.
    pub files: Vec<PathBuf>,
    /// Noise applied.
    pub noise: NoiseStats,
}

impl Summary {
    /// Total number of records.
    pub fn total_records(&self) -> usize {
        self.records.iter().map(|(_, n)| n).sum()
    }
}

impl fmt::Display for Summary {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(
            f,
            "wrote {} records of {} customers to `{}`",
            self.total_records(),
            self.entities,
            self.dir.display()
        )?;
        for (s, n) in &self.records {
            writeln!(f, "  {:<8} {:>9}  {}", s.name(), n, s.file_name())?;
        }
        writeln!(f, "  truth    {:>9}  truth.csv", self.total_records())?;
        writeln!(f, "  spec                spec.toml")?;
        let mut parts = Vec::new();
        for k in NoiseKind::ALL {
            let n = self.noise.applied(k);
            if n > 0 {
                parts.push(format!("{} {n}", k.name()));
            }
        }
        if !parts.is_empty() {
            writeln!(f, "noise: {}", parts.join(", "))?;
        }
        Ok(())
    }
}

/// The linkage spec written next to the generated files.
pub fn spec_toml() -> &'static str {
    r#"version = 1

[[source]]
name = "crm"
path = "crm_contacts.csv"      # relative to the spec
id = "contact_id"
country = "US"                  # default ISO country
date_order = "mdy"              # ymd | dmy | mdy
name_order = "given_first"      # given_first | family_first (for full-name columns without comma)
[source.columns]                # standard attribute = "header"
given_name = "first_name"
family_name = "last_name"
street = "street"
city = "city"
region = "state"
postcode = "zip"
country = "country"
phone = "phone"
email = "email"
birth_date = "dob"

[[source]]
name = "webshop"
path = "webshop_accounts.csv"
id = "account_id"
country = "DE"
date_order = "dmy"
name_order = "family_first"
[source.columns]
full_name = "name"
email = "email"
phone = "phone"
street = "address_line"
postcode = "postal_code"
city = "town"
country = "country_code"
birth_date = "birthday"

[[source]]
name = "support"
path = "support_tickets.csv"
id = "ticket_id"
country = "GB"
date_order = "ymd"
name_order = "given_first"
[source.columns]
full_name = "customer_name"
email = "email"
phone = "phone"
postcode = "postcode"
city = "city"
country = "country"
birth_date = "date_of_birth"

[[compare]]
attribute = "family_name"
levels = ["exact", "translit", "jaro_winkler >= 0.92", "any_token", "jaro_winkler >= 0.80"]

[[compare]]
attribute = "given_name"
levels = ["exact", "nickname", "jaro_winkler >= 0.92", "initial", "jaro_winkler >= 0.80"]

[[compare]]
attribute = "birth_date"
levels = ["exact", "date_swap", "date_one_digit", "same_year"]

[[compare]]
attribute = "email"
levels = ["exact", "levenshtein <= 2", "local_part"]

[[compare]]
attribute = "phone"
levels = ["exact"]

[[compare]]
attribute = "postcode"
levels = ["exact"]

[[compare]]
attribute = "city"
levels = ["exact", "translit", "jaro_winkler >= 0.90"]

[[compare]]
attribute = "street"
levels = ["exact", "jaro_winkler >= 0.90"]

[[block]]
name = "name_postcode"
keys = ["soundex(family_name)", "postcode"]

[[block]]
name = "email"
keys = ["email"]

[[block]]
name = "phone"
keys = ["phone"]

[[block]]
name = "birth_given"
keys = ["birth_date", "initial(given_name)"]

[decide]
match_at = 0.9
review_at = 0.5

[cluster]
# A customer has one date of birth: clusters with different birth dates are not merged
# (the refused merges are listed in refused.csv). Remove this where birth dates are
# unreliable.
unique = ["birth_date"]

[model]
seed = 42
u_sample_pairs = 200000
max_iterations = 100
"#
}

/// Write one source table as CSV.
fn write_source(data: &Dataset, source: Source, path: &Path) -> crate::Result<()> {
    let mut w = CsvWriter::create(path)?;
    w.row(source.header())?;
    for r in data.table(source).records() {
        let id = r.id();
        w.row(std::iter::once(id.as_str()).chain(r.values()))?;
    }
    w.finish()
}

/// Write the truth file.
fn write_truth(data: &Dataset, path: &Path) -> crate::Result<()> {
    let mut w = CsvWriter::create(path)?;
    w.row(["source", "source_id", "entity_id"])?;
    for s in Source::ALL {
        for r in data.table(s).records() {
            w.row([s.name(), &r.id(), &r.entity_id()])?;
        }
    }
    w.finish()
}

/// Write `data` into `dir` (created if missing): three source files, `truth.csv` and
/// `spec.toml`. The files are written into a fresh run folder and switched into place as
/// a whole (see [`crate::output::staging`]): an earlier data set in `dir` is replaced
/// completely or, if the write fails or is killed, not at all.
pub fn write_dataset(data: &Dataset, dir: &Path) -> crate::Result<Summary> {
    let mut staging = crate::output::Staging::of_kind(dir, "data")?;
    staging.set_meta("command", "synth");
    let paths: Vec<PathBuf> = Source::ALL
        .iter()
        .map(|s| staging.path(s.file_name()))
        .collect();
    let truth = staging.path("truth.csv");
    let spec = staging.path("spec.toml");
    // The four data files are independent: write them side by side.
    let (sources, truth_result) = rayon::join(
        || -> crate::Result<()> {
            let results: Vec<crate::Result<()>> = {
                use rayon::prelude::*;
                Source::ALL
                    .par_iter()
                    .zip(paths.par_iter())
                    .map(|(&s, p)| write_source(data, s, p))
                    .collect()
            };
            results.into_iter().collect()
        },
        || write_truth(data, &truth),
    );
    sources?;
    truth_result?;
    std::fs::write(&spec, spec_toml()).map_err(|e| Error::write(&spec, e))?;
    crate::output::staging::crash_point("synth-written");
    let files = staging.commit()?;
    Ok(Summary {
        dir: dir.to_path_buf(),
        records: Source::ALL
            .iter()
            .map(|&s| (s, data.table(s).len()))
            .collect(),
        entities: data.customers(),
        files,
        noise: data.stats().clone(),
    })
}
