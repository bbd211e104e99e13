fn main() {
    std::process::exit(clockprep::cli::main());
}
