//! `trialyst watch` and its hidden worker command.

use super::args::{analysis_settings, AnalyseOneArgs, WatchArgs};
use super::{EXIT_OK, EXIT_SOME_FAILED, EXIT_USAGE};

/// `trialyst watch`: the options checked, then the watcher until it is asked to stop.
pub(crate) fn watch_command(args: WatchArgs) -> i32 {
    let settings = match analysis_settings(&args.analysis) {
        Ok(settings) => settings,
        Err(error) => {
            eprintln!("trialyst: {error}");
            return EXIT_USAGE;
        }
    };
    let poll = match args.poll {
        Some(seconds) if seconds.is_finite() && seconds > 0.0 => Some(std::time::Duration::from_secs_f64(seconds)),
        Some(seconds) => {
            eprintln!("trialyst: --poll takes a number of seconds above 0, not {seconds}");
            return EXIT_USAGE;
        }
        None => None,
    };
    let limits_usable = args.time_limit.is_finite()
        && args.time_limit > 0.0
        && args.claim_expiry.is_finite()
        && args.claim_expiry >= 0.0;
    if !limits_usable {
        eprintln!("trialyst: --time-limit and --claim-expiry take positive numbers");
        return EXIT_USAGE;
    }
    let program = match std::env::current_exe() {
        Ok(program) => program,
        Err(error) => {
            eprintln!("trialyst: cannot find the program itself to start workers: {error}");
            return EXIT_USAGE;
        }
    };
    let options = ::watch::WatchOptions {
        folder: args.folder,
        recursive: args.recursive,
        poll,
        log: args.log,
        out_dir: args.out_dir,
        limits: ::watch::WorkerLimits {
            memory_bytes: args.memory_limit.saturating_mul(1024 * 1024),
            time: std::time::Duration::from_secs_f64(args.time_limit),
        },
        claim_expiry: std::time::Duration::from_secs_f64(args.claim_expiry * 60.0),
        settings,
        program,
    };
    match ::watch::watch(options) {
        Ok(()) => EXIT_OK,
        Err(::watch::WatchError::CannotStart(message)) => {
            eprintln!("trialyst: {message}");
            EXIT_USAGE
        }
        Err(error) => {
            eprintln!("trialyst: {error}");
            EXIT_SOME_FAILED
        }
    }
}

/// The watcher's isolated worker: analyses the one request it is given.
pub(crate) fn analyse_one_command(args: &AnalyseOneArgs) -> i32 {
    ::watch::worker::analyse_one(&args.request);
    EXIT_OK
}
