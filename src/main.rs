//! The `hubwatch` binary: parse arguments, run, print an error once, set the exit code.

use std::io::Write as _;

use clap::Parser;

fn main() {
    let cli = hubwatch::cli::Cli::parse();
    if let Err(e) = hubwatch::cli::run(cli) {
        // The terminal may be gone (a dashboard whose session was closed): never panic on it.
        let _ = writeln!(std::io::stderr(), "hubwatch: {e}");
        std::process::exit(e.exit_code());
    }
}
