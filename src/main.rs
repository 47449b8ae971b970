//! The binary: parse the command line, run the library, map the outcome to an exit code.

use std::process::ExitCode;

use clap::Parser;

/// True for the panic `print!` raises when stdout is a closed pipe (e.g. `| head`), which is
/// not a failure of the command.
fn is_closed_stdout(payload: &(dyn std::any::Any + Send)) -> bool {
    let text = payload
        .downcast_ref::<String>()
        .map(String::as_str)
        .or_else(|| payload.downcast_ref::<&str>().copied())
        .unwrap_or("");
    text.contains("failed printing to stdout") && text.contains("Broken pipe")
}

fn main() -> ExitCode {
    let cli = nevermet::cli::Cli::parse();
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if !is_closed_stdout(info.payload()) {
            default_hook(info);
        }
    }));
    match std::panic::catch_unwind(|| nevermet::run(cli.command)) {
        Ok(Ok(code)) => code,
        Ok(Err(err)) => {
            if nevermet::is_broken_pipe(&err) {
                return ExitCode::SUCCESS;
            }
            eprintln!("nevermet: {err:#}");
            ExitCode::from(nevermet::EXIT_FAILURE)
        }
        Err(payload) if is_closed_stdout(payload.as_ref()) => ExitCode::SUCCESS,
        Err(payload) => std::panic::resume_unwind(payload),
    }
}
