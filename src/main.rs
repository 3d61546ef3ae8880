//! The `vetscore` binary: parse the command line, run the app, map the result to an exit code.
//! Everything it prints goes through the console (`vetscore::console`), clap's help and errors
//! and the crash message included.

use std::process::ExitCode;

use clap::Parser;
use vetscore::app::{self, INTERNAL_ERROR};
use vetscore::cli::Cli;

fn main() -> ExitCode {
    std::panic::set_hook(Box::new(|info| {
        // The default hook would print the panic message raw; it may quote input text.
        let backtrace = std::backtrace::Backtrace::capture();
        let trace = match backtrace.status() {
            std::backtrace::BacktraceStatus::Captured => format!("\n{backtrace}"),
            _ => String::new(),
        };
        let _ = app::console().err(&format!(
            "{info}{trace}\nvetscore crashed: this is a bug in vetscore, not a verdict on your \
             models. Please report it with the message above and the command you ran.\n"
        ));
    }));
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(error) => {
            // Help and version go to standard output with exit 0; usage errors to standard
            // error with exit 2.
            let text = error.render().to_string();
            let written = if error.use_stderr() {
                app::console().err(&text)
            } else {
                app::console().out(&text)
            };
            return match (written, error.exit_code()) {
                (Err(_), 0) => ExitCode::from(INTERNAL_ERROR),
                (_, code) => ExitCode::from(u8::try_from(code).unwrap_or(INTERNAL_ERROR)),
            };
        }
    };
    match app::run(cli) {
        Ok(exit) => ExitCode::from(exit.code()),
        Err(error) => {
            let _ = app::console().err(&format!("vetscore could not finish: {error:#}\n"));
            ExitCode::from(INTERNAL_ERROR)
        }
    }
}
