//! Committed reference files (the results-document snapshots and the golden plan
//! workbooks) and their re-blessing: with `TRIALYST_BLESS=1` a test writes what it
//! made over the committed file instead of comparing; under CI (`CI=true`) blessing is
//! refused, so a changed format can never be accepted there without a commit.

use std::path::{Path, PathBuf};

/// The environment variable that asks the tests to rewrite their reference files.
pub const BLESS_VARIABLE: &str = "TRIALYST_BLESS";

/// True when the reference files are to be rewritten rather than compared. Panics
/// under CI, where a reference may only change through a commit.
pub fn blessing() -> bool {
    let asked = std::env::var(BLESS_VARIABLE).is_ok_and(|value| !value.is_empty() && value != "0");
    let under_ci = std::env::var("CI").is_ok_and(|value| value == "true" || value == "1");
    assert!(
        !(asked && under_ci),
        "{BLESS_VARIABLE} is refused under CI: re-bless on a developer machine and commit the files"
    );
    asked
}

/// A path inside the repository, from the `tests` crate's folder.
pub fn repository_path(relative: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join(relative)
}

/// The committed reference file at `relative`, or, when blessing, `made` written there
/// (and `None` returned: nothing to compare). A missing file fails with the command
/// that makes it.
pub fn committed_or_bless(relative: &str, made: &[u8]) -> Option<Vec<u8>> {
    let path = repository_path(relative);
    if blessing() {
        if let Some(folder) = path.parent() {
            std::fs::create_dir_all(folder).expect("the reference folder can be made");
        }
        std::fs::write(&path, made).expect("the reference file can be written");
        eprintln!("{BLESS_VARIABLE}: wrote {relative}");
        return None;
    }
    match std::fs::read(&path) {
        Ok(bytes) => Some(bytes),
        Err(error) => panic!(
            "the reference file {relative} cannot be read ({error}); make it with \
             `{BLESS_VARIABLE}=1 cargo test -p tests --test integration` and commit it"
        ),
    }
}
