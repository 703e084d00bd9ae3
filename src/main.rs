//! driftplan command line: parses arguments, calls the library, maps errors to exit codes.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Args::parse();
    stop_cleanly_on_signals();
    match cli::run(args) {
        Ok(()) => {}
        Err(e) => {
            eprintln!("error: {}", message(&e));
            std::process::exit(exit_code(&e));
        }
    }
}

/// On SIGINT or SIGTERM: remove the staging folders of runs in progress (the earlier run in
/// each output folder stays whole), then exit with the conventional 128 + signal number (130,
/// 143). A signal arriving while a run moves its files into place waits for the move.
fn stop_cleanly_on_signals() {
    use signal_hook::consts::{SIGINT, SIGTERM};
    let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM]) else {
        // Without a handler the default applies: the process stops and the next run into the
        // folder removes the staging folder left behind.
        return;
    };
    std::thread::spawn(move || {
        if let Some(sig) = signals.forever().next() {
            eprintln!("\nstopped by signal {sig}: removing this run's unfinished outputs");
            driftplan::export::run_folder::abandon_all();
            std::process::exit(128 + sig);
        }
    });
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
