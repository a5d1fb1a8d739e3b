//! The `burnout` command-line tool. The one place where errors become exit
//! codes: 0 solved, 2 usage or unparseable value, 3 infeasible.

mod cli;

use burnout::ErrorClass;
use clap::Parser;
use std::process::ExitCode;

/// clap's multi-line message as one line: its error text, the missing
/// arguments or possible values, and any tip, without the usage block.
fn one_line(text: &str) -> String {
    let mut parts: Vec<String> = Vec::new();
    for line in text.lines() {
        let t = line.trim();
        if t.is_empty() {
            continue;
        }
        if t.starts_with("Usage:") || t.starts_with("For more information") {
            break;
        }
        parts.push(t.trim_start_matches("error: ").to_string());
    }
    if parts.is_empty() {
        "invalid arguments".into()
    } else {
        parts.join(" ")
    }
}

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
                eprintln!(
                    "error: missing subcommand: expected solve, scan, batch or budget (see 'burnout --help')"
                );
                return ExitCode::from(2);
            }
            eprintln!(
                "error: {} (see 'burnout --help')",
                one_line(&e.render().to_string())
            );
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
