//! beatfold's command line: a thin layer over the library (see `beatfold::cli`-style glue in
//! `src/cli/`). Exit status: 0 ok, 1 analysis failed, 2 bad usage or unreadable input.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Cli::parse();
    if let Err(e) = cli::commands::run(args) {
        eprintln!("error: {e:#}");
        eprintln!("({})", beatfold::NOTICE);
        let code = e
            .downcast_ref::<beatfold::Error>()
            .map_or(2, beatfold::Error::exit_code);
        std::process::exit(code);
    }
}
