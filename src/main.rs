//! The `hubwatch` binary: parse arguments, run, print an error once, set the exit code.

use clap::Parser;

fn main() {
    let cli = hubwatch::cli::Cli::parse();
    if let Err(e) = hubwatch::cli::run(cli) {
        eprintln!("hubwatch: {e}");
        std::process::exit(e.exit_code());
    }
}
