//! Command-line front end.

mod args;
mod commands;
mod output;
mod progress;

use clap::Parser;

/// Parse the arguments, run the subcommand, print any error, and return
/// the exit code: 0 success, 2 bad input, 1 internal failure.
pub fn run() -> i32 {
    let cli = match args::Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return code;
        }
    };
    if let Some(n) = cli.global.threads {
        if let Err(e) = rayon::ThreadPoolBuilder::new()
            .num_threads(n.max(1))
            .build_global()
        {
            eprintln!("apsidal: cannot set up {n} threads: {e}");
            return 1;
        }
    }
    match commands::dispatch(&cli) {
        Ok(()) => 0,
        Err(e) => {
            eprintln!("apsidal: {e}");
            e.exit_code()
        }
    }
}
