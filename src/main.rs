//! The `kinlink` binary: argument parsing and glue over the library.

use std::process::ExitCode;

mod commands;

// Allocation-heavy stages (standardization, interning) run on several threads; mimalloc
// keeps them from contending on the system allocator (measured: see README, Performance).
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> ExitCode {
    commands::main()
}
