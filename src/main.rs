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

/// Removes any temporary output file on SIGINT, SIGTERM or SIGHUP, then
/// ends the process as the signal would have (only SIGKILL, which cannot
/// be caught, can leave a temporary file behind).
fn remove_temporaries_on_signals() {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM, SIGHUP]) else {
        return;
    };
    std::thread::spawn(move || {
        if let Some(sig) = signals.forever().next() {
            cli::output::cleanup_then(|| {
                let _ = signal_hook::low_level::emulate_default_handler(sig);
                std::process::exit(128 + sig);
            });
        }
    });
}

fn main() -> ExitCode {
    cli::diag::check_standard_streams();
    remove_temporaries_on_signals();
    let cli = match cli::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            use clap::error::ErrorKind;
            if matches!(e.kind(), ErrorKind::DisplayHelp | ErrorKind::DisplayVersion) {
                // Help asked for is the run's output: losing it is an error.
                return match cli::emit(e.render().to_string().as_bytes()) {
                    Ok(()) => ExitCode::SUCCESS,
                    Err(e) => {
                        cli::diag::line(&format!("error: {e}"));
                        ExitCode::from(2)
                    }
                };
            }
            if e.kind() == ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
                cli::diag::line(
                    "error: missing subcommand: expected solve, scan, batch or budget (see 'burnout --help')",
                );
                return ExitCode::from(2);
            }
            cli::diag::line(&format!(
                "error: {} (see 'burnout --help')",
                one_line(&e.render().to_string())
            ));
            return ExitCode::from(2);
        }
    };
    match cli::run(cli) {
        Ok(code) => ExitCode::from(code as u8),
        Err(e) => {
            cli::diag::line(&format!("error: {}", e.to_string().replace('\n', " ")));
            match e.class() {
                ErrorClass::Usage | ErrorClass::Io => ExitCode::from(2),
                ErrorClass::Infeasible => ExitCode::from(3),
            }
        }
    }
}
