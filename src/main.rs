//! The `burnout` command-line tool. The one place where errors become exit
//! codes: 0 solved, 2 usage or unparseable value, 3 infeasible.

mod cli;

use burnout::ErrorClass;
use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = match cli::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            use clap::error::ErrorKind;
            if matches!(e.kind(), ErrorKind::DisplayHelp | ErrorKind::DisplayVersion) {
                let _ = e.print();
                return ExitCode::SUCCESS;
            }
            if e.kind() == ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
                let _ = e.print();
                return ExitCode::from(2);
            }
            let text = e.render().to_string();
            let first = text
                .lines()
                .find(|l| !l.trim().is_empty())
                .unwrap_or("invalid arguments")
                .trim_start_matches("error: ")
                .to_string();
            eprintln!("error: {first} (see 'burnout --help')");
            return ExitCode::from(2);
        }
    };
    match cli::run(cli) {
        Ok(code) => ExitCode::from(code as u8),
        Err(e) => {
            eprintln!("error: {}", e.to_string().replace('\n', " "));
            match e.class() {
                ErrorClass::Usage => ExitCode::from(2),
                ErrorClass::Infeasible => ExitCode::from(3),
            }
        }
    }
}
