//! The `apsidal` command line: argument parsing, progress display and
//! printing only; every subcommand is one call into the library.

mod cli;

fn main() {
    std::process::exit(cli::run());
}
