//! driftplan command line: parses arguments, calls the library, maps errors to exit codes.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Args::parse();
    match cli::run(args) {
        Ok(()) => {}
        Err(e) => {
            eprintln!("error: {e:#}");
            std::process::exit(1);
        }
    }
}
