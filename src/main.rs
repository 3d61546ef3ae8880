//! The `vetscore` binary: parse the command line, run the app, map the result to an exit code.

#![allow(clippy::print_stderr)]

use std::process::ExitCode;

use clap::Parser;
use vetscore::app::{self, INTERNAL_ERROR};
use vetscore::cli::Cli;

fn main() -> ExitCode {
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        default_hook(info);
        eprintln!(
            "vetscore crashed: this is a bug in vetscore, not a verdict on your models. \
             Please report it with the message above and the command you ran."
        );
    }));
    let cli = Cli::parse();
    match app::run(cli) {
        Ok(exit) => ExitCode::from(exit.code()),
        Err(error) => {
            eprintln!("vetscore could not finish: {error:#}");
            ExitCode::from(INTERNAL_ERROR)
        }
    }
}
