//! `trialyst serve`: the JSON-RPC server on stdio or on a loopback TCP address.

use service::error_chain;

use super::args::ServeArgs;

/// Serves until the client leaves; the exit code says whether the server could start.
pub(crate) fn serve_command(args: &ServeArgs) -> i32 {
    for root in &args.allow_root {
        if !root.is_dir() {
            eprintln!("trialyst: --allow-root '{}' is not a folder", root.display());
            return server::EXIT_CANNOT_START;
        }
    }
    server::from_proto::confine_to(args.allow_root.clone());
    let served = match &args.listen {
        Some(address) => server::serve_tcp(address),
        None => server::serve_stdio(),
    };
    served.unwrap_or_else(|error| {
        eprintln!("trialyst: {}", error_chain(&error));
        server::EXIT_CANNOT_START
    })
}
