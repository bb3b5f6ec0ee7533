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
    let request_time_limit = match std::time::Duration::try_from_secs_f64(args.request_time_limit) {
        Ok(limit) if limit.is_zero() => None,
        Ok(limit) => Some(limit),
        Err(_) => {
            eprintln!(
                "trialyst: --request-time-limit '{}' is not a number of seconds of 0 or more",
                args.request_time_limit
            );
            return super::EXIT_USAGE;
        }
    };
    let limits = server::ServeLimits {
        max_message_bytes: usize::try_from(args.max_message_mib << 20).unwrap_or(usize::MAX),
        request_time_limit,
    };
    let served = match &args.listen {
        Some(address) => server::serve_tcp(address, limits),
        None => server::serve_stdio(limits),
    };
    served.unwrap_or_else(|error| {
        eprintln!("trialyst: {}", error_chain(&error));
        server::EXIT_CANNOT_START
    })
}
