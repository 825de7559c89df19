//! `bridgebook`: parse the command line, run it, map the outcome to an exit code.

use bridgebook::cli::{run, Cli, EXIT_BAD_INPUT};
use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(e) => {
            // Help and version are not errors; every other parse failure is bad usage.
            let code = if e.use_stderr() { EXIT_BAD_INPUT } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let code = run(
        &cli,
        &mut std::io::stdout().lock(),
        &mut std::io::stderr().lock(),
    );
    ExitCode::from(code)
}
