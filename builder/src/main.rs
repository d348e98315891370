//! `regimix`: build fuzzy multi-model soft sensors from historian data.
//!
//! Exit status: 0 success; 2 bad input (config, data, files); 1 internal error.

mod cli;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    // A bug must not dump a backtrace at the user (these machines set RUST_BACKTRACE=1).
    std::panic::set_hook(Box::new(|info| {
        let message = info
            .payload()
            .downcast_ref::<&str>()
            .map(|s| s.to_string())
            .or_else(|| info.payload().downcast_ref::<String>().cloned())
            .unwrap_or_else(|| "unknown failure".to_string());
        eprintln!(
            "regimix: internal error: {message} (please report this with the command you ran)"
        );
    }));
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("regimix: {err:#}");
            ExitCode::from(2)
        }
    }
}
