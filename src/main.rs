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
