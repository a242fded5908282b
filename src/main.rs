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
    #[allow(unsafe_code)]
    // SAFETY: restoring the default SIGPIPE disposition before any thread starts.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    // A panic is a bug: like every internal failure it exits with code 1 (the panic
    // message is already printed by the default hook), never with Rust's 101.
    std::panic::catch_unwind(commands::main).unwrap_or_else(|_| {
        eprintln!("error: internal error: samekey stopped on a bug; please report it with the message above");
        ExitCode::from(1)
    })
}
