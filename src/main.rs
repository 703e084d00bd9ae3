//! driftplan command line: parses arguments, calls the library, maps errors to exit codes.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Args::parse();
    match cli::run(args) {
        Ok(()) => {}
        Err(e) => {
            eprintln!("error: {}", message(&e));
            std::process::exit(1);
        }
    }
}

/// The error and its causes joined by ": ", leaving out a cause whose text the message already
/// holds (many errors quote their source in their own text).
fn message(e: &anyhow::Error) -> String {
    let mut text = String::new();
    for cause in e.chain() {
        let c = cause.to_string();
        if text.contains(&c) {
            continue;
        }
        if !text.is_empty() {
            text.push_str(": ");
        }
        text.push_str(&c);
    }
    text
}
