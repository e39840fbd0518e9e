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

/// Sign-off gate for libraries of on-chip passives characterised as Touchstone files.
#[derive(Debug, clap::Parser)]
#[command(name = "lcgate", version, about)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

/// The commands of DESIGN §3.
#[derive(Debug, clap::Subcommand)]
enum Command {
    /// Print every figure of every view of one Touchstone file.
    Inspect(inspect::InspectArgs),
}

/// Entry point of the binary.
pub fn main() -> ExitCode {
    use clap::Parser;
    // clap prints usage errors and exits with 2 itself (and 0 for --help)
    let cli = Cli::parse();
    match cli.command {
        Command::Inspect(a) => ExitCode::from(inspect::run(&a)),
    }
}
