//! `glasspoint`: the command line. Everything lives in the library crate.

#[tokio::main]
async fn main() -> std::process::ExitCode {
    glasspoint::cli::main().await
}
