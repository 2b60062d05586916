//! The `sectio` binary: parse flags, run, exit with the documented status.

use clap::Parser;

fn main() {
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
/// of a benchmark run's time in `perf`, against a twentieth with version 2).
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;
