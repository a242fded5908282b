//! `samekey demo`: link the shipped demo data and score the result against its truth.

use std::path::{Path, PathBuf};

use samekey::pipeline::{self, RunOptions};
use samekey::spec::Spec;

use super::{summary, Global};

/// The demo data, built into the binary so that an installed `samekey` has it too
/// (the files of `demo-data/`; see its README).
const DEMO_FILES: [(&str, &str); 5] = [
    ("spec.toml", include_str!("../../demo-data/spec.toml")),
    (
        "crm_contacts.csv",
        include_str!("../../demo-data/crm_contacts.csv"),
    ),
    (
        "webshop_accounts.csv",
        include_str!("../../demo-data/webshop_accounts.csv"),
    ),
    (
        "support_tickets.csv",
        include_str!("../../demo-data/support_tickets.csv"),
    ),
    ("truth.csv", include_str!("../../demo-data/truth.csv")),
];

/// Arguments of `samekey demo`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Folder with demo data (spec.toml, the source CSVs, truth.csv) [default: the demo
    /// data built into samekey, written to a temporary folder for the run].
    #[arg(long)]
    pub data: Option<PathBuf>,
    /// Output folder.
    #[arg(long, default_value = "samekey-demo-out")]
    pub out: PathBuf,
    /// Print the time spent per stage.
    #[arg(long)]
    pub timings: bool,
}

/// Run `samekey demo`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    // The built-in data goes to a temporary folder that is removed when the run ends.
    let builtin;
    let data: &Path = match &args.data {
        Some(d) => d,
        None => {
            builtin = write_builtin()?;
            builtin.path()
        }
    };
    let shown = match &args.data {
        Some(d) => d.display().to_string(),
        None => "the demo data built into samekey (demo-data/ in its repository)".into(),
    };
    let spec = Spec::load(&data.join("spec.toml"))?;
    samekey::evaluate::read_truth(data.join("truth.csv"))?;
    let opts = RunOptions {
        progress: !global.quiet,
        out: args.out.clone(),
        ..Default::default()
    };
    let summary = pipeline::run(&spec, &opts)?;
    if !global.quiet {
        println!("samekey demo: invented customers of three systems, see {shown}\n");
        summary::print(&summary, args.timings);
    }
    summary::print_actual(&data.join("truth.csv"), &args.out, &summary, true, global)?;
    if !global.quiet {
        println!("\nAll outputs are in {}", args.out.display());
    }
    Ok(())
}

/// A temporary folder, removed when dropped.
struct TempFolder(PathBuf);

impl TempFolder {
    fn path(&self) -> &Path {
        &self.0
    }
}

impl Drop for TempFolder {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Write the built-in demo data into a fresh temporary folder.
fn write_builtin() -> anyhow::Result<TempFolder> {
    let nanos = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map_or(0, |d| d.subsec_nanos());
    let path = std::env::temp_dir().join(format!(
        "samekey-demo-data-{}-{nanos:09}",
        std::process::id()
    ));
    // create_dir, not create_dir_all: a folder of that name that already exists is
    // somebody else's and is not written into.
    std::fs::create_dir(&path).map_err(|e| samekey::Error::write(&path, e))?;
    let dir = TempFolder(path);
    for (name, text) in DEMO_FILES {
        let p = dir.path().join(name);
        std::fs::write(&p, text).map_err(|e| samekey::Error::write(&p, e))?;
    }
    Ok(dir)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_built_in_data_is_the_repository_demo() {
        let dir = write_builtin().unwrap();
        let repo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
        for (name, _) in DEMO_FILES {
            assert_eq!(
                std::fs::read(dir.path().join(name)).unwrap(),
                std::fs::read(repo.join(name)).unwrap(),
                "{name}"
            );
        }
        // The spec reads its sources relative to its own folder: it loads from there.
        Spec::load(&dir.path().join("spec.toml")).unwrap();
        let path = dir.path().to_path_buf();
        drop(dir);
        assert!(!path.exists(), "temporary folder left behind");
    }
}
