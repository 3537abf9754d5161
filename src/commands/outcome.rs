//! How a command ended, when it did not fail; `main` turns it into the exit code.

/// How a command ended, when it did not fail.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// Exit 0.
    Pass,
    /// Exit 1: the gate failed, or `verify` found drift.
    Fail,
}
