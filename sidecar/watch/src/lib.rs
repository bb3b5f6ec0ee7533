//! `trialyst watch DIR`: results beside each workbook dropped into a folder.
//!
//! - Events: notify 8 with notify-debouncer-full. A workbook is taken up on
//!   close-after-write and on rename-into-place (the create event fires
//!   while the file is still being written). With `--poll SECONDS` (network
//!   shares, where inotify sees nothing written by other hosts) the folder
//!   is listed every SECONDS and a file is taken up once its size and
//!   modification time are unchanged across two listings.
//! - Once per content: `.trialyst/state.json` keeps the SHA-256 of what was
//!   analysed ([`state`]); on start the folder is listed and whatever
//!   arrived or changed while the watcher was down is analysed.
//! - Isolation: each workbook is read in a child process with memory and
//!   time limits ([`worker`]); a crash becomes a problems workbook.
//! - Folder settings: each workbook takes the nearest `trialyst.toml` from
//!   its folder up to the watched folder, by the service's one rule
//!   ([`service::folder_settings::settings_file_for`]); the worker analyses
//!   and writes through [`service::analyse_and_write`], announcing the
//!   destination before the write.
//! - Many machines: a claim file per workbook ([`claim`]).
//! - SIGINT/SIGTERM: the current worker is stopped, its temporary file
//!   removed, and the watcher exits 0; the workbook is taken up again on
//!   the next start.

pub mod claim;
pub mod log;
pub mod owner;
pub mod state;
pub mod worker;

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{Receiver, RecvTimeoutError};
use std::sync::Arc;
use std::time::{Duration, Instant, SystemTime};

use notify::event::{AccessKind, AccessMode, ModifyKind, RenameMode};
use notify::{EventKind, RecursiveMode};
use notify_debouncer_full::{new_debouncer, DebounceEventResult};

use claim::{try_claim, ClaimAttempt};
use log::Log;
use service::folder_settings::{parse_folder_settings, read_settings_file, settings_file_for, FOLDER_SETTINGS_FILE};
use service::settings::Settings;
use service::{FailureReport, Problem};
use state::{nanos, Entry, State, StateStore, STATE_FOLDER};
pub use worker::WorkerLimits;
use worker::{run_worker, worker_arguments, WorkerMessage, WorkerOutcome, WorkerRequest};

/// How long the debouncer waits after a file's last event.
pub const DEBOUNCE: Duration = Duration::from_millis(100);
/// A file whose reading fails as if cut short is tried again while it is younger than this.
pub const SETTLE: Duration = Duration::from_secs(2);
/// Most attempts at a workbook that still looks incomplete.
const MAX_ATTEMPTS: u32 = 6;
/// How soon a workbook claimed by another watcher is looked at again.
const HELD_RECHECK: Duration = Duration::from_secs(2);

/// What the watcher needs to start: the folder and how to treat it.
#[derive(Debug, Clone)]
pub struct WatchOptions {
    /// The folder to watch.
    pub folder: PathBuf,
    /// Watch sub-folders too.
    pub recursive: bool,
    /// List the folder every so often instead of listening for changes.
    pub poll: Option<Duration>,
    /// A file to append the log lines to, beside standard error.
    pub log: Option<PathBuf>,
    /// The folder for results given on the command line (else the `output
    /// folder` setting, else beside each original).
    pub out_dir: Option<PathBuf>,
    /// Limits of each worker.
    pub limits: WorkerLimits,
    /// Age after which another watcher's claim counts as abandoned.
    pub claim_expiry: Duration,
    /// Settings given by the caller, applied to every workbook.
    pub settings: Settings,
    /// The program whose hidden worker command analyses one workbook.
    pub program: PathBuf,
}

/// Why the watcher could not start, or stopped other than when asked.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum WatchError {
    /// The options or the folder cannot be used (the command line's usage error).
    #[error("{0}")]
    CannotStart(String),
    /// The watcher stopped on an error after it had started.
    #[error("{0}")]
    Stopped(String),
}

/// Watches a folder until SIGINT or SIGTERM: every workbook that arrives or
/// changes is analysed once per content, in a worker process.
///
/// # Errors
///
/// [`WatchError::CannotStart`] when the folder, the folder settings file,
/// the log file or the state folder cannot be used; [`WatchError::Stopped`]
/// when watching failed after the start.
pub fn watch(options: WatchOptions) -> Result<(), WatchError> {
    let cannot = |message: String| Err(WatchError::CannotStart(message));
    if !options.folder.is_dir() {
        return cannot(format!("'{}' is not a folder", options.folder.display()));
    }
    let folder = std::path::absolute(&options.folder).unwrap_or_else(|_| options.folder.clone());
    let folder_file = FolderFile::new(&folder);
    if let Err(message) = folder_file.check() {
        return cannot(message);
    }
    let log = match Log::open(options.log.as_deref()) {
        Ok(log) => log,
        Err(error) => return cannot(format!("cannot open the log file: {error}")),
    };
    let store = match StateStore::open(&folder) {
        Ok(store) => store,
        Err(error) => {
            return cannot(format!(
                "cannot make the folder '{}' for the watcher's state: {error}",
                folder.join(STATE_FOLDER).display()
            ))
        }
    };
    let stop = Arc::new(AtomicBool::new(false));
    for signal in [signal_hook::consts::SIGINT, signal_hook::consts::SIGTERM] {
        if let Err(error) = signal_hook::flag::register(signal, Arc::clone(&stop)) {
            return cannot(format!("cannot listen for signals: {error}"));
        }
    }
    let store = store.with_stop(Arc::clone(&stop));
    let mut watcher = Watcher {
        out_dir: options
            .out_dir
            .as_ref()
            .map(|dir| std::path::absolute(dir).unwrap_or_else(|_| dir.clone())),
        folder,
        recursive: options.recursive,
        settings: options.settings,
        limits: options.limits,
        claim_expiry: options.claim_expiry,
        program: options.program,
        store,
        state: State::default(),
        folder_file,
        log,
        stop,
        pending: BTreeMap::new(),
    };
    let (state, notes) = watcher.store.load_at_start();
    watcher.state = state;
    for note in notes {
        watcher.log.event("state", "", &note);
    }
    watcher.clean_after_restart();
    let result = match options.poll {
        Some(interval) => watcher.run_polling(interval),
        None => watcher.run_listening(),
    };
    match result {
        Ok(()) => {
            watcher.log.event("stopped", "", "asked to stop; exiting");
            Ok(())
        }
        Err(message) => {
            watcher.log.event("stopped", "", &message);
            Err(WatchError::Stopped(message))
        }
    }
}

/// The folder settings file, re-read when it changes.
struct FolderFile {
    path: PathBuf,
    seen: Option<(u64, u64)>,
    settings: Result<Option<Settings>, String>,
}

impl FolderFile {
    fn new(folder: &Path) -> Self {
        let mut file = Self {
            path: folder.join(FOLDER_SETTINGS_FILE),
            seen: None,
            settings: Ok(None),
        };
        file.refresh();
        file
    }

    fn stamp(&self) -> Option<(u64, u64)> {
        let meta = std::fs::metadata(&self.path).ok()?;
        Some((meta.len(), meta.modified().map(nanos).unwrap_or(0)))
    }

    /// Re-reads the file if it changed; true when it did.
    fn refresh(&mut self) -> bool {
        let stamp = self.stamp();
        if stamp == self.seen && self.seen.is_some() {
            return false;
        }
        let changed = stamp != self.seen;
        self.seen = stamp;
        self.settings = match stamp {
            None => Ok(None),
            Some(_) => match std::fs::read_to_string(&self.path) {
                Ok(text) => parse_folder_settings(&text, &self.path.display().to_string())
                    .map(Some)
                    .map_err(|error| error.to_string()),
                Err(error) => Err(format!("cannot read '{}': {error}", self.path.display())),
            },
        };
        changed
    }

    fn check(&self) -> Result<(), String> {
        self.settings.as_ref().map(|_| ()).map_err(Clone::clone)
    }

    fn current(&self) -> Option<&Settings> {
        self.settings.as_ref().ok().and_then(Option::as_ref)
    }
}

#[derive(Debug, Clone, Copy)]
struct Pending {
    due: Instant,
    attempts: u32,
}

struct Watcher {
    folder: PathBuf,
    recursive: bool,
    out_dir: Option<PathBuf>,
    settings: Settings,
    limits: WorkerLimits,
    claim_expiry: Duration,
    program: PathBuf,
    store: StateStore,
    state: State,
    folder_file: FolderFile,
    log: Log,
    stop: Arc<AtomicBool>,
    pending: BTreeMap<PathBuf, Pending>,
}

/// Size and modification time, the poll's stability check.
type Stamp = (u64, u64);

fn stamp_of(path: &Path) -> Option<Stamp> {
    let meta = std::fs::metadata(path).ok()?;
    meta.is_file()
        .then(|| (meta.len(), meta.modified().map(nanos).unwrap_or(0)))
}

impl Watcher {
    /// Removes what a killed watcher on this host left: its claims (so the
    /// workbooks it held are analysed now) and the temporary output files
    /// of those workbooks whose writer is gone.
    fn clean_after_restart(&mut self) {
        let freed = claim::clean_after_restart(self.store.folder());
        for relative in &freed {
            let path = self.folder.join(relative);
            let mut folders: Vec<PathBuf> = path.parent().map(Path::to_path_buf).into_iter().collect();
            folders.extend(self.output_folder(&path));
            folders.extend(self.out_dir.clone());
            folders.sort();
            folders.dedup();
            let stem = path
                .file_stem()
                .map(|stem| stem.to_string_lossy().into_owned())
                .unwrap_or_default();
            let removed: usize = folders
                .iter()
                .map(|folder| worker::remove_dead_temporaries(folder, &stem))
                .sum();
            let detail = if removed == 0 {
                "claim left by a stopped watcher removed".to_string()
            } else {
                format!("claim and {removed} temporary file(s) left by a stopped watcher removed")
            };
            self.log.event("state", relative, &detail);
        }
    }

    fn stopping(&self) -> bool {
        self.stop.load(Ordering::SeqCst)
    }

    /// The path relative to the watched folder, with `/`; `None` for paths
    /// outside it or inside a hidden folder.
    fn relative(&self, path: &Path) -> Option<String> {
        let inside = path.strip_prefix(&self.folder).ok()?;
        let parts: Vec<String> = inside
            .components()
            .map(|part| part.as_os_str().to_string_lossy().into_owned())
            .collect();
        if parts.is_empty() || (!self.recursive && parts.len() > 1) {
            return None;
        }
        if parts[..parts.len() - 1].iter().any(|part| part.starts_with('.')) {
            return None;
        }
        Some(parts.join("/"))
    }

    /// True for a file the watcher analyses.
    fn is_candidate(&self, path: &Path) -> bool {
        let name = path
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_default();
        self.relative(path).is_some()
            && service::has_workbook_extension(&name)
            && !service::is_ignored_file_name(&name)
            && self.resolves_inside(path)
    }

    /// True when `path`, with every link resolved, is still inside the
    /// watched folder: a link to a file elsewhere is never read (what it
    /// points to would otherwise be copied into the folder as results).
    fn resolves_inside(&self, path: &Path) -> bool {
        let folder = self.folder.canonicalize().unwrap_or_else(|_| self.folder.clone());
        match path.canonicalize() {
            Ok(real) => real.starts_with(folder),
            // Gone already: nothing to read; the caller finds that out.
            Err(_) => true,
        }
    }

    fn is_folder_file(&self, path: &Path) -> bool {
        path == self.folder_file.path
    }

    /// A folder settings file in a sub-folder of the watched folder.
    fn is_nested_folder_file(&self, path: &Path) -> bool {
        !self.is_folder_file(path)
            && path.file_name().is_some_and(|name| name == FOLDER_SETTINGS_FILE)
            && self.relative(path).is_some()
    }

    /// The folder settings in force for a workbook, by the service's one
    /// rule: the nearest `trialyst.toml` from its folder up to the watched
    /// folder (whose own file is kept read). `Err` names a file that
    /// cannot be used.
    fn folder_settings_of(&self, path: &Path) -> Result<Option<(PathBuf, Settings)>, String> {
        match settings_file_for(path, Some(&self.folder)) {
            None => Ok(None),
            Some(file) if file == self.folder_file.path => {
                self.folder_file.check()?;
                Ok(self.folder_file.current().cloned().map(|settings| (file, settings)))
            }
            Some(file) => read_settings_file(&file)
                .map(|settings| Some((file, settings)))
                .map_err(|error| error.to_string()),
        }
    }

    fn listing(&self) -> Vec<PathBuf> {
        let (found, _) = service::collect_workbooks(std::slice::from_ref(&self.folder), self.recursive);
        found.into_iter().filter(|path| self.is_candidate(path)).collect()
    }

    fn queue(&mut self, path: PathBuf, due: Instant) {
        let attempts = self.pending.get(&path).map_or(0, |pending| pending.attempts);
        self.pending.insert(path, Pending { due, attempts });
    }

    fn catch_up(&mut self, why: &str) {
        let listing = self.listing();
        self.log.event(
            "catching up",
            "",
            &format!("{} workbook(s) in the folder ({why})", listing.len()),
        );
        let now = Instant::now();
        for path in listing {
            self.queue(path, now);
        }
    }

    fn settings_changed(&mut self) {
        if self.folder_file.refresh() {
            match self.folder_file.check() {
                Ok(()) => {
                    self.log.event(
                        "settings",
                        FOLDER_SETTINGS_FILE,
                        "folder settings read; they apply to workbooks analysed from now on",
                    );
                    // Workbooks held back by a bad file are taken up now.
                    self.catch_up("the folder settings changed");
                }
                Err(message) => self.log.event("problem", FOLDER_SETTINGS_FILE, &message),
            }
        }
    }

    /// A folder settings file in a sub-folder changed (`paths`, when known):
    /// logged, and the folder listed again so that workbooks held back by a
    /// bad file are taken up.
    fn nested_settings_changed(&mut self, paths: &[PathBuf]) {
        for path in paths {
            let shown = self.relative(path).unwrap_or_default();
            self.log.event(
                "settings",
                &shown,
                "folder settings changed; they apply to workbooks of that folder analysed from now on",
            );
        }
        if paths.is_empty() {
            self.log.event(
                "settings",
                "",
                "a folder settings file in a sub-folder changed; it applies to workbooks analysed from now on",
            );
        }
        self.catch_up("a folder settings file changed");
    }

    /// Size and time of every folder settings file in a sub-folder (with
    /// `--recursive`; hidden folders left out), for the polling loop, which
    /// hears of no change by itself.
    fn nested_settings_stamps(&self) -> BTreeMap<PathBuf, Stamp> {
        fn walk(folder: &Path, found: &mut BTreeMap<PathBuf, Stamp>) {
            let Ok(entries) = std::fs::read_dir(folder) else { return };
            for entry in entries.filter_map(Result::ok) {
                let path = entry.path();
                if path.is_dir() && !entry.file_name().to_string_lossy().starts_with('.') {
                    if let Some(stamp) = stamp_of(&path.join(FOLDER_SETTINGS_FILE)) {
                        found.insert(path.clone(), stamp);
                    }
                    walk(&path, found);
                }
            }
        }
        let mut found = BTreeMap::new();
        if self.recursive {
            walk(&self.folder, &mut found);
        }
        found
    }

    fn run_listening(&mut self) -> Result<(), String> {
        let (sender, receiver) = std::sync::mpsc::channel::<DebounceEventResult>();
        let mut debouncer = new_debouncer(DEBOUNCE, None, sender)
            .map_err(|error| format!("cannot watch '{}': {error}", self.folder.display()))?;
        let mode = if self.recursive {
            RecursiveMode::Recursive
        } else {
            RecursiveMode::NonRecursive
        };
        debouncer
            .watch(&self.folder, mode)
            .map_err(|error| format!("cannot watch '{}': {error}", self.folder.display()))?;
        self.log.event(
            "watching",
            &self.folder.display().to_string(),
            if self.recursive {
                "with sub-folders, listening for closed and renamed files"
            } else {
                "listening for closed and renamed files"
            },
        );
        self.catch_up("start");
        while !self.stopping() {
            self.receive(&receiver);
            self.process_due();
        }
        drop(debouncer);
        Ok(())
    }

    fn receive(&mut self, receiver: &Receiver<DebounceEventResult>) {
        let wait = self
            .pending
            .values()
            .map(|pending| pending.due.saturating_duration_since(Instant::now()))
            .min()
            .unwrap_or(Duration::from_millis(50))
            .min(Duration::from_millis(50));
        let mut batch = match receiver.recv_timeout(wait) {
            Ok(batch) => vec![batch],
            Err(RecvTimeoutError::Timeout) => return,
            Err(RecvTimeoutError::Disconnected) => {
                self.stop.store(true, Ordering::SeqCst);
                return;
            }
        };
        while let Ok(more) = receiver.try_recv() {
            batch.push(more);
        }
        let mut received: Vec<PathBuf> = Vec::new();
        let mut rescan = false;
        let mut settings = false;
        let mut nested_settings: Vec<PathBuf> = Vec::new();
        for result in batch {
            match result {
                Ok(events) => {
                    for event in events {
                        if event.need_rescan() {
                            rescan = true;
                            continue;
                        }
                        let target = match event.kind {
                            EventKind::Access(AccessKind::Close(AccessMode::Write))
                            | EventKind::Modify(ModifyKind::Name(RenameMode::To))
                            | EventKind::Modify(ModifyKind::Name(RenameMode::Both))
                            | EventKind::Modify(ModifyKind::Name(RenameMode::Any)) => event.paths.last().cloned(),
                            _ => None,
                        };
                        let Some(path) = target else { continue };
                        if self.is_folder_file(&path) {
                            settings = true;
                        } else if self.is_nested_folder_file(&path) {
                            nested_settings.push(path);
                        } else if self.is_candidate(&path) && path.is_file() && !received.contains(&path) {
                            received.push(path);
                        }
                    }
                }
                Err(errors) => {
                    for error in errors {
                        self.log.event("watch error", "", &error.to_string());
                    }
                    rescan = true;
                }
            }
        }
        if settings {
            self.settings_changed();
        }
        if !nested_settings.is_empty() {
            self.nested_settings_changed(&nested_settings);
        }
        let now = Instant::now();
        for path in received {
            let shown = self.relative(&path).unwrap_or_default();
            self.log.event("received", &shown, "");
            self.queue(path, now);
        }
        if rescan {
            self.catch_up("the change notices overflowed");
        }
    }

    fn run_polling(&mut self, every: Duration) -> Result<(), String> {
        self.log.event(
            "watching",
            &self.folder.display().to_string(),
            &format!(
                "listing the folder every {} s; a file is taken up when its size and time are unchanged across two listings",
                every.as_secs_f64()
            ),
        );
        let mut previous: Option<HashMap<PathBuf, Stamp>> = None;
        // Files taken up in this session at a given stamp, so that one whose
        // outcome leaves no new state (skipped, held back) is not taken up
        // at every listing.
        let mut handled: HashMap<PathBuf, Stamp> = HashMap::new();
        let mut nested_settings = self.nested_settings_stamps();
        let mut next = Instant::now();
        while !self.stopping() {
            if Instant::now() >= next {
                next += every;
                self.settings_changed();
                let nested_now = self.nested_settings_stamps();
                if nested_now != nested_settings {
                    nested_settings = nested_now;
                    self.nested_settings_changed(&[]);
                }
                let mut current = HashMap::new();
                for path in self.listing() {
                    if let Some(stamp) = stamp_of(&path) {
                        current.insert(path, stamp);
                    }
                }
                match &previous {
                    None => self.log.event(
                        "catching up",
                        "",
                        &format!(
                            "{} workbook(s) in the folder (start); each is taken up once a second listing finds it unchanged",
                            current.len()
                        ),
                    ),
                    Some(previous) => {
                        let now = Instant::now();
                        let mut stable: Vec<PathBuf> = current
                            .iter()
                            .filter(|(path, stamp)| {
                                previous.get(*path) == Some(*stamp)
                                    && handled.get(*path) != Some(*stamp)
                                    && !self.pending.contains_key(*path)
                            })
                            .map(|(path, _)| path.clone())
                            .collect();
                        stable.sort();
                        for path in stable {
                            let stamp = current[&path];
                            handled.insert(path.clone(), stamp);
                            let relative = self.relative(&path).unwrap_or_default();
                            let known = self
                                .state
                                .files
                                .get(&relative)
                                .is_some_and(|entry| entry.bytes == stamp.0 && entry.modified_ns == stamp.1);
                            if known {
                                continue;
                            }
                            self.log.event("received", &relative, "");
                            self.queue(path, now);
                        }
                    }
                }
                handled.retain(|path, _| current.contains_key(path));
                previous = Some(current);
            }
            self.process_due();
            let wait = next
                .saturating_duration_since(Instant::now())
                .min(Duration::from_millis(50));
            std::thread::sleep(wait);
        }
        Ok(())
    }

    fn process_due(&mut self) {
        loop {
            if self.stopping() {
                return;
            }
            let now = Instant::now();
            let Some(path) = self
                .pending
                .iter()
                .filter(|(_, pending)| pending.due <= now)
                .min_by_key(|(_, pending)| pending.due)
                .map(|(path, _)| path.clone())
            else {
                return;
            };
            let Some(pending) = self.pending.remove(&path) else {
                return;
            };
            self.process(&path, pending.attempts);
        }
    }

    fn retry(&mut self, path: &Path, attempts: u32, after: Duration) {
        self.pending.insert(
            path.to_path_buf(),
            Pending {
                due: Instant::now() + after,
                attempts: attempts + 1,
            },
        );
    }

    fn output_folder(&self, path: &Path) -> Option<PathBuf> {
        let settings = self
            .folder_settings_of(path)
            .ok()
            .flatten()
            .map(|(_, settings)| settings)
            .unwrap_or_default();
        service::output_folder_for(
            path,
            self.out_dir.as_deref(),
            &self.settings.clone().over(&settings),
            std::slice::from_ref(&self.folder),
        )
        .ok()
        .flatten()
    }

    /// Where a problems workbook for `path` may go: the worker's answer when
    /// it lies inside the watched folder (or the output folder given on the
    /// command line) and ends as a problems workbook, else beside the
    /// workbook. The worker parses hostile files, so its answer is checked.
    fn problems_destination(&self, path: &Path, proposed: &Path) -> PathBuf {
        let mut roots = vec![self.folder.clone()];
        roots.extend(self.out_dir.clone());
        let named_as_ours = proposed.file_name().is_some_and(|name| {
            name.to_string_lossy()
                .to_lowercase()
                .ends_with(service::PROBLEMS_SUFFIX)
        });
        if named_as_ours && service::inside_any(proposed, &roots) {
            proposed.to_path_buf()
        } else {
            service::problems_path_named(path, None, &service::output_name_among_siblings(path))
        }
    }

    fn process(&mut self, path: &Path, attempts: u32) {
        let Some(relative) = self.relative(path) else { return };
        let Some(before) = stamp_of(path) else { return };
        let (sha256, bytes) = match service::sha256_file(path) {
            Ok(found) => found,
            Err(error) => {
                if path.exists() && attempts < MAX_ATTEMPTS {
                    self.log
                        .event("retrying", &relative, &format!("cannot read it yet ({error})"));
                    self.retry(path, attempts, Duration::from_millis(500));
                }
                return;
            }
        };
        if stamp_of(path) != Some(before) {
            self.retry(path, attempts.saturating_sub(1), Duration::from_millis(300));
            return;
        }
        if self.skip_if_done(&relative, &sha256) {
            return;
        }
        let folder_settings = match self.folder_settings_of(path) {
            Ok(found) => found.map(|(file, _)| file),
            Err(message) => {
                self.log.event(
                    "problem",
                    &relative,
                    &format!("held back until the folder settings file is fixed: {message}"),
                );
                return;
            }
        };
        let claim = match try_claim(self.store.folder(), &relative, self.claim_expiry) {
            Ok(ClaimAttempt::Mine(claim)) => claim,
            Ok(ClaimAttempt::Held(holder)) => {
                self.log
                    .event("skipped", &relative, &format!("being analysed by {holder}"));
                self.retry(path, attempts.saturating_sub(1), HELD_RECHECK);
                return;
            }
            Err(error) => {
                self.log
                    .event("problem", &relative, &format!("cannot claim it: {error}"));
                self.retry(path, attempts, Duration::from_secs(5));
                return;
            }
        };
        // Another watcher may have finished it while we looked.
        if let Err(error) = self.store.refresh(&mut self.state) {
            self.log.event(
                "problem",
                STATE_FOLDER,
                &format!("cannot read the watcher's state: {error}"),
            );
        }
        if self.skip_if_done(&relative, &sha256) {
            return;
        }
        let args = worker_arguments(&WorkerRequest {
            file: path.to_path_buf(),
            out_dir: self.out_dir.clone(),
            folder_settings,
            settings: self.settings.clone(),
            allowed_output_roots: vec![self.folder.clone()],
        });
        let outcome = run_worker(&self.program, &args, self.limits, &self.stop);
        let folder = self.folder.clone();
        let record = |outcome: &str, output: &Path| Entry {
            sha256: sha256.clone(),
            bytes,
            modified_ns: before.1,
            outcome: outcome.to_string(),
            at: service::now_rfc3339(),
            // Relative to the watched folder when inside it, so that watchers
            // that mount the share at different places agree.
            output: output
                .strip_prefix(&folder)
                .map(|inside| inside.to_string_lossy().replace('\\', "/"))
                .unwrap_or_else(|_| output.display().to_string()),
        };
        match outcome {
            WorkerOutcome::Answered(WorkerMessage::Analysed {
                results_file,
                verdicts,
                findings,
            }) => {
                let results_file = PathBuf::from(results_file);
                let stale = service::problems_path_named(
                    path,
                    results_file.parent(),
                    &service::output_name_among_siblings(path),
                );
                workbook_io::write::remove_if_ours(&stale);
                self.remember(&relative, record("analysed", &results_file));
                self.log.event(
                    "analysed",
                    &relative,
                    &format!(
                        "{} -> {}; {}",
                        if findings == 1 {
                            "1 finding".to_string()
                        } else {
                            format!("{findings} findings")
                        },
                        self.shown(&results_file),
                        // Each verdict is a sentence; joined, they lose their own full stops.
                        verdicts
                            .iter()
                            .map(|verdict| verdict.trim_end_matches('.'))
                            .collect::<Vec<_>>()
                            .join("; ")
                    ),
                );
            }
            WorkerOutcome::Answered(WorkerMessage::Failed { report, problems_file }) => {
                let young = std::fs::metadata(path)
                    .and_then(|meta| meta.modified())
                    .ok()
                    .and_then(|modified| SystemTime::now().duration_since(modified).ok())
                    .is_none_or(|age| age < SETTLE);
                let changed = stamp_of(path) != Some(before);
                if report.maybe_incomplete && (young || changed) && attempts < MAX_ATTEMPTS {
                    self.log.event(
                        "retrying",
                        &relative,
                        &format!("not readable yet, perhaps still being copied: {}", report.message),
                    );
                    drop(claim);
                    self.retry(
                        path,
                        attempts,
                        if changed {
                            Duration::from_millis(300)
                        } else {
                            SETTLE / 2
                        },
                    );
                    return;
                }
                let destination = self.problems_destination(path, Path::new(&problems_file));
                self.write_problems(path, &relative, &report, &destination, record);
            }
            WorkerOutcome::Answered(WorkerMessage::Writing { .. }) => {}
            WorkerOutcome::Crashed(detail) => {
                let report = unsafe_file_report(&format!(
                    "the workbook could not be read safely: {detail}; the reader runs with {} MiB of memory",
                    self.limits.memory_bytes / (1024 * 1024)
                ));
                let destination = service::problems_path_named(
                    path,
                    self.output_folder(path).as_deref(),
                    &service::output_name_among_siblings(path),
                );
                self.write_problems(path, &relative, &report, &destination, record);
            }
            WorkerOutcome::TimedOut => {
                let report = unsafe_file_report(&format!(
                    "the workbook could not be read within the time limit of {} s",
                    self.limits.time.as_secs_f64()
                ));
                let destination = service::problems_path_named(
                    path,
                    self.output_folder(path).as_deref(),
                    &service::output_name_among_siblings(path),
                );
                self.write_problems(path, &relative, &report, &destination, record);
            }
            WorkerOutcome::Stopped => {
                self.log.event(
                    "stopped",
                    &relative,
                    "abandoned; no results written; it will be analysed on the next start",
                );
            }
        }
        drop(claim);
    }

    /// True when `entry` records this content as handled and its output is still there
    /// (a deleted results or problems file asks for the workbook to be analysed again).
    /// Whether `relative` with this content was analysed already (logged as skipped).
    fn skip_if_done(&self, relative: &str, sha256: &str) -> bool {
        let done = self
            .state
            .files
            .get(relative)
            .is_some_and(|entry| self.done(entry, sha256));
        if done {
            self.log.event("skipped", relative, "unchanged since it was analysed");
        }
        done
    }

    fn done(&self, entry: &Entry, sha256: &str) -> bool {
        entry.sha256 == sha256 && (entry.output.is_empty() || self.folder.join(&entry.output).exists())
    }

    fn shown(&self, path: &Path) -> String {
        path.strip_prefix(&self.folder)
            .map(|inside| inside.display().to_string())
            .unwrap_or_else(|_| path.display().to_string())
    }

    fn remember(&mut self, relative: &str, entry: Entry) {
        match self.store.record(&mut self.state, relative, entry.clone()) {
            Ok(()) => {}
            Err(error) => {
                self.state.files.insert(relative.to_string(), entry);
                self.log.event(
                    "problem",
                    STATE_FOLDER,
                    &format!("cannot save the watcher's state: {error}"),
                );
            }
        }
    }

    fn write_problems(
        &mut self,
        path: &Path,
        relative: &str,
        report: &FailureReport,
        destination: &Path,
        record: impl Fn(&str, &Path) -> Entry,
    ) {
        let file_name = path
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_default();
        if let Some(folder) = destination.parent() {
            let _ = std::fs::create_dir_all(folder);
        }
        let book =
            service::report::problems::build_problems_book(&file_name, &service::now_rfc3339(), &report.problems);
        let written = workbook_io::write::write_book(&book, destination);
        // Results of earlier content would now be misleading.
        let stale = service::results_path_named(path, destination.parent(), &service::output_name_among_siblings(path));
        workbook_io::write::remove_if_ours(&stale);
        self.remember(relative, record("problem", destination));
        match written {
            Ok(()) => self.log.event(
                "problem",
                relative,
                &format!("{} -> {}", report.message, self.shown(destination)),
            ),
            Err(error) => self.log.event(
                "problem",
                relative,
                &format!(
                    "{}; the problems workbook could not be written either: {}",
                    report.message,
                    service::error_chain(&error)
                ),
            ),
        }
    }
}

fn unsafe_file_report(message: &str) -> FailureReport {
    FailureReport {
        message: message.to_string(),
        problems: vec![Problem {
            place: String::new(),
            what: message.to_string(),
            fix: "Open the workbook in your spreadsheet program, copy the trial table alone into a new workbook and save that. Very large used areas (formatting applied to whole rows or columns) or a damaged file are the usual causes.".into(),
        }],
        maybe_incomplete: false,
    }
}
