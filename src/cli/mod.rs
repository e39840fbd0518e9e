//! Command-line parsing (clap), progress and exit codes. Thin: each command hands
//! over to the library modules.

use std::process::ExitCode;

pub mod inspect;

/// Exit status: every part passed every error-level check, no drift.
pub const EXIT_PASS: u8 = 0;
/// Exit status: a failure, undecided check, unreadable or missing part, or drift.
pub const EXIT_FAIL: u8 = 1;
/// Exit status: the run itself could not be made.
pub const EXIT_ERROR: u8 = 2;

/// Entry point of the binary.
pub fn main() -> ExitCode {
    eprintln!("lcgate: no command is wired yet");
    ExitCode::from(EXIT_ERROR)
}
