//! The `websigma` binary: parse the command line, run, map the outcome to an exit code.

use clap::Parser;
use websigma::{app, cli::Cli, error::EXIT_ERROR};

fn main() {
    let cli = Cli::parse();
    let code = match app::run(cli) {
        Ok(outcome) => outcome.exit_code(),
        Err(e) => {
            eprintln!("error: {e:#}");
            EXIT_ERROR
        }
    };
    std::process::exit(code);
}
