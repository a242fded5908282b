//! The `samekey` binary: argument parsing and glue over the library.

use std::process::ExitCode;

mod commands;

// Allocation-heavy stages (standardization, interning) run on several threads; mimalloc
// keeps them from contending on the system allocator (measured: see README, Performance).
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> ExitCode {
    // Like other Unix tools, end quietly when stdout is closed (e.g. piped into `head`)
    // instead of failing on the next print.
    #[cfg(unix)]
    // SAFETY: restoring the default SIGPIPE disposition before any thread starts.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    commands::main()
}
