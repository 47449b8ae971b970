//! The binary: parse the command line, run the library, map the outcome to an exit code.

use std::process::ExitCode;

use clap::Parser;

/// The stream whose closing (e.g. `| head`) made a `print!` or `eprint!` panic, if that is
/// what the panic was. Commands print through `nevermet::console`, which never panics; this
/// catches any print that does not.
fn closed_stream(payload: &(dyn std::any::Any + Send)) -> Option<&'static str> {
    let text = payload
        .downcast_ref::<String>()
        .map(String::as_str)
        .or_else(|| payload.downcast_ref::<&str>().copied())
        .unwrap_or("");
    if !text.contains("Broken pipe") {
        return None;
    }
    ["stdout", "stderr"]
        .into_iter()
        .find(|s| text.contains(&format!("failed printing to {s}")))
}

fn main() -> ExitCode {
    let cli = nevermet::cli::Cli::parse();
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if closed_stream(info.payload()).is_none() {
            default_hook(info);
        }
    }));
    match std::panic::catch_unwind(|| nevermet::run(cli.command)) {
        Ok(Ok(code)) => code,
        Ok(Err(err)) => {
            if nevermet::is_broken_pipe(&err) {
                return ExitCode::SUCCESS;
            }
            nevermet::errln!("nevermet: {err:#}");
            ExitCode::from(nevermet::EXIT_FAILURE)
        }
        // Commands print their results last, so a closed stdout comes after the work is done;
        // a closed stderr may have swallowed a problem, so it is not called a success.
        Err(payload) => match closed_stream(payload.as_ref()) {
            Some("stdout") => ExitCode::SUCCESS,
            Some(_) => ExitCode::from(nevermet::EXIT_FAILURE),
            None => std::panic::resume_unwind(payload),
        },
    }
}
