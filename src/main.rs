//! The `loopwright` binary: parses the command line and reports errors.
//!
//! Exit codes: 0 success; 2 bad input or a request that cannot be met (the message names the
//! field, the value and the allowed range).

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    keep_freed_memory();
    let cli = loopwright::cli::Cli::parse();
    match loopwright::cli::run(cli) {
        Ok(()) => match loopwright::cli::stdout_error() {
            None => ExitCode::SUCCESS,
            Some(e) => {
                eprintln!("loopwright: error: cannot write the output: {e}");
                ExitCode::from(2)
            }
        },
        Err(e) => {
            for line in e.to_string().lines() {
                eprintln!("loopwright: error: {line}");
            }
            ExitCode::from(2)
        }
    }
}

/// The field solver allocates and frees buffers of a few MB per solution (tens of them in a
/// run). glibc's default gives each back to the system (by `munmap`, or by trimming the heap
/// above 128 kB), so every solution's buffers are page-faulted and zeroed afresh: 0.4–0.7 s of
/// system time in `demo` (docs/architecture.md, "Performance"). Kept
/// up to 32 MB, and in one arena rather than one per thread (which keeps the peak below the
/// default's), they are reused instead. The library leaves its host's allocator alone.
fn keep_freed_memory() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only sets allocator parameters; it is called before any thread starts.
    unsafe {
        const KEEP: libc::c_int = 32 << 20;
        libc::mallopt(libc::M_ARENA_MAX, 1);
        libc::mallopt(libc::M_MMAP_THRESHOLD, KEEP);
        libc::mallopt(libc::M_TRIM_THRESHOLD, KEEP);
    }
}
