//! `turbid`: the command-line front end.
//!
//! Exit codes: 0 success, 2 invalid input (the message says where and why),
//! 1 internal failure (a bug: please report it).

mod summary;

use clap::{Parser, Subcommand};
use std::path::PathBuf;
use std::process::ExitCode;
use turbid_engine::scenario;

#[derive(Parser)]
#[command(
    name = "turbid",
    version,
    about = "Simulate how solid particles settle out of a liquid: batch columns and thickeners"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Validate a scenario file and print the fluid, the size classes and their settling data.
    Check {
        /// Scenario file (YAML).
        file: PathBuf,
    },
    /// Print the JSON Schema of the scenario format (for editors and validators).
    Schema,
}

const EXIT_INVALID_INPUT: u8 = 2;
const EXIT_INTERNAL: u8 = 1;

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                EXIT_INVALID_INPUT
            } else {
                0
            };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    // A panic is a bug in turbid, never the user's fault: report it as such.
    std::panic::set_hook(Box::new(|info| {
        eprintln!("internal error (a bug in turbid, please report it): {info}");
    }));
    match std::panic::catch_unwind(|| run(cli)) {
        Ok(code) => code,
        Err(_) => ExitCode::from(EXIT_INTERNAL),
    }
}

fn run(cli: Cli) -> ExitCode {
    match cli.command {
        Command::Check { file } => match scenario::load(&file) {
            Ok(setup) => {
                print!("{}", summary::render(&file, &setup));
                ExitCode::SUCCESS
            }
            Err(e) => {
                eprintln!("{e}");
                ExitCode::from(EXIT_INVALID_INPUT)
            }
        },
        Command::Schema => {
            let schema = scenario::json_schema();
            match serde_json::to_string_pretty(&schema) {
                Ok(s) => {
                    println!("{s}");
                    ExitCode::SUCCESS
                }
                Err(e) => {
                    eprintln!("internal error: cannot print the schema: {e}");
                    ExitCode::from(EXIT_INTERNAL)
                }
            }
        }
    }
}
