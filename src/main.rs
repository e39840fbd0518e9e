//! The `lcgate` binary: parse arguments, run, map the outcome to an exit code.
fn main() -> std::process::ExitCode {
    lcgate::cli::main()
}
