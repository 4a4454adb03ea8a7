//! The `hoverline` command: a thin layer over the library. It parses arguments, runs one
//! command, prints the error chain and picks the exit code (0 done, 2 bad input or usage,
//! 1 an analysis that could not be completed, 130 interrupted by a signal).

mod cli;

use std::process::ExitCode;

/// Exit status after an interrupt (SIGINT, SIGTERM or SIGHUP): 128 + SIGINT, the shells'
/// convention for a command stopped by Ctrl-C.
const INTERRUPTED: i32 = 130;

fn main() -> ExitCode {
    // On an interrupt, remove this run's temporaries, staging folder and lock before ending:
    // the output folder keeps its old complete set (or the new one, if it was being moved in).
    // Without the handler (it cannot be installed) the next run still clears what is left.
    let _ = ctrlc::set_handler(|| {
        hoverline::output::files::remove_unfinished();
        eprintln!("interrupted: unfinished output removed");
        std::process::exit(INTERRUPTED);
    });
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
