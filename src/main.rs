//! The `concord` binary: a thin shell over [`concord::cli`].

fn main() -> std::process::ExitCode {
    concord::cli::run()
}
