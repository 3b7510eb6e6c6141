//! The `ladderfan` binary: a thin wrapper around [`cli::main_exit_code`].
mod cli;

fn main() {
    std::process::exit(cli::main_exit_code());
}
