//! The `mettle` command: parses arguments, calls the library, maps errors
//! to exit codes (0 success, 1 runtime failure, 2 bad usage or bad input).

mod cli;
mod serve;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = match cli::Cli::try_parse() {
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
            if is_broken_pipe(&e) {
                return ExitCode::SUCCESS;
            }
            eprintln!("mettle: error: {e:#}");
            let bad_input = e
                .chain()
                .find_map(|c| c.downcast_ref::<mettle::Error>())
                .map_or_else(
                    || e.downcast_ref::<cli::UsageError>().is_some(),
                    |m| m.is_bad_input(),
                );
            ExitCode::from(if bad_input { 2 } else { 1 })
        }
    }
}

fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
    })
}
