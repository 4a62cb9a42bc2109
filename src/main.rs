//! The `dwarfbound` binary: parse the command line and hand over to the library.

#![forbid(unsafe_code)]

use clap::Parser;

fn main() {
    let cli = dwarfbound::cli::Cli::parse();
    let code = dwarfbound::cli::main_with(cli);
    std::process::exit(code as i32);
}
