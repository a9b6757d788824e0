//! The `fadecast` binary: everything happens in [`fadecast::cli::run`]; this maps its failure
//! to a message on stderr and an exit code (2 bad input, 1 runtime failure).

use std::process::ExitCode;

fn main() -> ExitCode {
    match fadecast::cli::run() {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            for line in error.to_string().lines() {
                eprintln!("error: {line}");
            }
            ExitCode::from(error.exit_code())
        }
    }
}
