//! One module per subcommand; each has an `Args` (clap) and a `run`.

pub mod check;
pub mod decompose;
pub mod interrupt;
pub mod plot_beam;
pub mod run;
pub mod simulate;
pub mod sweep;

use std::fmt;

/// A failed command: the message chain to print and whether the input or the run was at fault.
pub struct Failure {
    message: String,
    bad_input: bool,
}

impl Failure {
    /// The user's input (config, file, setting) is wrong: exit code 2.
    pub fn bad_input(error: impl std::error::Error) -> Self {
        Self { message: chain(&error), bad_input: true }
    }

    /// Something failed while running: exit code 1.
    pub fn running(error: impl std::error::Error) -> Self {
        Self { message: chain(&error), bad_input: false }
    }

    /// The process exit code for this failure.
    pub fn exit_code(&self) -> u8 {
        if self.bad_input {
            2
        } else {
            1
        }
    }
}

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

/// The error and its sources, each once, separated by ": ".
fn chain(error: &dyn std::error::Error) -> String {
    let mut message = error.to_string();
    let mut source = error.source();
    while let Some(s) = source {
        let text = s.to_string();
        if !message.contains(&text) {
            message.push_str(": ");
            message.push_str(&text);
        }
        source = s.source();
    }
    message
}
