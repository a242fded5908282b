//! The `kinlink` binary: argument parsing and glue over the library.

use std::process::ExitCode;

mod commands;

fn main() -> ExitCode {
    commands::main()
}
