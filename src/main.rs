//! The `ulpgauge` command.

fn main() {
    std::process::exit(ulpgauge::cli::run());
}
