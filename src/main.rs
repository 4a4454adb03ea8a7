//! The `hoverline` command: a thin layer over the library. It parses arguments, runs one
//! command, prints the error chain and picks the exit code (0 done, 2 bad input or usage,
//! 1 an analysis that could not be completed).

mod cli;

use std::process::ExitCode;

fn main() -> ExitCode {
    let args = match <cli::Args as clap::Parser>::try_parse() {
        Ok(a) => a,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match cli::run(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::from(e.exit_code())
        }
    }
}
