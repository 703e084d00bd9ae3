//! driftplan command line: parses arguments, calls the library, maps errors to exit codes.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Args::parse();
    match cli::run(args) {
        Ok(()) => {}
        Err(e) => {
            eprintln!("error: {}", message(&e));
            std::process::exit(exit_code(&e));
        }
    }
}

/// 3 when the plan's targets cannot all be reached (README, "Exit codes"), else 1 (a bad plan or
/// input, or a failure); clap exits with 2 on a bad command line before this.
fn exit_code(e: &anyhow::Error) -> i32 {
    use driftplan::pipeline::RunError;
    use driftplan::solve::SolveError;
    let cannot = e.chain().any(|c| {
        c.downcast_ref::<cli::CannotBeReached>().is_some()
            || matches!(
                c.downcast_ref::<RunError>(),
                Some(RunError::Solve(
                    SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_)
                ))
            )
            || matches!(
                c.downcast_ref::<SolveError>(),
                Some(SolveError::Infeasible(_) | SolveError::JointlyInfeasible(_))
            )
    });
    if cannot {
        cli::EXIT_CANNOT_BE_MET
    } else {
        1
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
