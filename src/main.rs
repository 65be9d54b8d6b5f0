//! The `halotank` binary: parses the command line and hands over to [`halotank::cli`].
fn main() -> std::process::ExitCode {
    halotank::cli::main()
}
