use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let cli = platesmith::cli::Cli::parse();
    let code = match std::panic::catch_unwind(|| platesmith::cli::run(cli)) {
        Ok(Ok(code)) => code,
        Ok(Err(err)) => {
            eprintln!("platesmith: {err}");
            err.exit_code()
        }
        Err(_) => {
            eprintln!("platesmith: internal error (a panic); please report this with the input that caused it");
            3
        }
    };
    ExitCode::from(code as u8)
}
