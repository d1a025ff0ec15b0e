//! The `stockfit` binary: parse arguments, read files, call the library, print, set the exit
//! code (0 done, 1 no build meets the spec, 2 bad input or usage).

mod cli;

fn main() {
    std::process::exit(cli::main());
}
