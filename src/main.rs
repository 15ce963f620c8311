//! The `websigma` binary: parse the command line, run, map the outcome to an exit code.

use clap::Parser;
use websigma::{app, cli::Cli, error::EXIT_ERROR};

fn main() {
    let cli = Cli::parse();
    let code = match app::run(cli) {
        Ok(outcome) => outcome.exit_code(),
        Err(e) => {
            // No user text may reach the terminal as a control code.
            let message = websigma::safe_text::printable_message(&format!("{e:#}"));
            eprintln!("error: {message}");
            EXIT_ERROR
        }
    };
    std::process::exit(code);
}
