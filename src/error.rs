//! Outcomes of a command and their exit codes (0 pass, 1 limit exceeded, 2 error).
//!
//! Errors themselves are `anyhow` errors with context, built in `app.rs` from
//! the typed errors of each stage (`ValidationError`, `ParseQuantityError`,
//! `FieldError`); `main.rs` prints them and exits with [`EXIT_ERROR`].

/// Exit code when every check passes.
pub const EXIT_PASS: i32 = 0;
/// Exit code when a limit is exceeded.
pub const EXIT_EXCEEDED: i32 = 1;
/// Exit code for an error (bad input, I/O).
pub const EXIT_ERROR: i32 = 2;

/// What a command concluded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Done, and no limit was exceeded.
    Pass,
    /// Done, and at least one limit was exceeded.
    Exceeded,
}

impl Outcome {
    /// The process exit code.
    pub fn exit_code(self) -> i32 {
        match self {
            Outcome::Pass => EXIT_PASS,
            Outcome::Exceeded => EXIT_EXCEEDED,
        }
    }
}
