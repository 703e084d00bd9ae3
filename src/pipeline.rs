//! Wires the stages together for the CLI.
