//! The `sectio` binary: parse flags, run, exit with the documented status.

use clap::Parser;

fn main() {
    keep_freed_memory();
    // Before any worker thread touches memory (see the module doc of `sectio::cli::memory`).
    sectio::cli::memory::leave_huge_pages_to_the_system();
    let cli = sectio::cli::args::Cli::parse();
    match sectio::cli::run(cli) {
        Ok(code) => std::process::exit(code),
        Err(e) => {
            eprintln!("sectio: error: {e:#}");
            std::process::exit(sectio::cli::EXIT_USAGE);
        }
    }
}

/// mimalloc: the batch allocates and frees many small vectors per file on several threads,
/// where it is markedly faster than the system allocator (measured with scripts/bench.sh).
/// Version 2 (feature `v2`): version 3 spreads a run's pages over more fresh memory, and with
/// transparent huge pages the kernel then zeroes whole 2 MiB pages for them (about a sixth
/// of a benchmark run's time in `perf`, against a twentieth with version 2). Huge pages are
/// left to the system's setting (`sectio::cli::memory`).
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

/// mimalloc hands freed memory back to the system after 10 ms by default. A large drawing
/// frees and allocates tens of megabytes between its steps, so each step got fresh memory
/// that the kernel zeroes first: a third of the time of a million-segment drawing in `perf`
/// (3.3 s against 2.3 s). Freed memory is now kept for a second, for the next step and the
/// next file; it still goes back when the run idles, and the batch's bounded window of files
/// in flight bounds it as before.
fn keep_freed_memory() {
    extern "C" {
        fn mi_option_set(option: std::ffi::c_int, value: std::ffi::c_long);
    }
    /// `mi_option_purge_delay` in mimalloc.h (version 2), in milliseconds.
    const MI_OPTION_PURGE_DELAY: std::ffi::c_int = 15;
    // SAFETY: mimalloc's documented option setter; it only stores the value in mimalloc's
    // option table, and runs first thing in `main`, before any other thread exists.
    unsafe { mi_option_set(MI_OPTION_PURGE_DELAY, 1000) }
}
