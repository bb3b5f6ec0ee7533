//! The three front ends agree: the same workbook, in a folder whose
//! `trialyst.toml` sets the confidence and the output folder, gets its
//! results workbook at the same place, with the same settings and the same
//! record of where each setting came from, whether it goes through
//! `trialyst run`, `trialyst watch` or `trialyst serve` (`writeResults`).
//!
//! The settings and figures are compared through the results document that
//! every results workbook keeps in its hidden sheet, read back with calamine.

use std::path::{Path, PathBuf};

use calamine::{Data, Reader, SheetVisible};
use serde_json::{json, Value};

use crate::common::{long_rows, temp_folder, trialyst, write_rows};
use crate::lsp::Session;
use crate::watch::{wait_for_file, Watching};

/// The folder settings of every copy of the trial.
const FOLDER_SETTINGS: &str = "confidence = 0.9\n\"output folder\" = \"out\"\n";

/// Where every front end must put the results, relative to the workbook's folder.
const RESULTS_IN_FOLDER: &str = "out/bath trial.results.xlsx";

/// A folder holding the trial workbook and the folder settings file.
fn trial_folder(root: &Path, name: &str) -> PathBuf {
    let folder = root.join(name);
    std::fs::create_dir_all(&folder).expect("a folder");
    // Invented coating thicknesses from three plating baths, in micrometres. Written once
    // and copied, so every front end reads the same bytes (a workbook written again in
    // another second carries another creation time).
    static SOURCE: std::sync::OnceLock<(tempfile::TempDir, PathBuf)> = std::sync::OnceLock::new();
    let (_, source) = SOURCE.get_or_init(|| {
        let kept = temp_folder();
        let source = kept.path().join("bath trial.xlsx");
        write_trial(&source);
        (kept, source)
    });
    std::fs::copy(source, folder.join("bath trial.xlsx")).expect("the trial copied");
    std::fs::write(folder.join("trialyst.toml"), FOLDER_SETTINGS).expect("folder settings written");
    folder
}

fn write_trial(path: &Path) {
    write_rows(
        path,
        "Runs",
        &long_rows(
            "Bath",
            "Thickness (um)",
            &[
                ("Bath 1", &[12.1, 12.4, 11.9, 12.2]),
                ("Bath 2", &[12.9, 13.2, 12.8, 13.1]),
                ("Bath 3", &[12.0, 12.3, 12.2, 11.8]),
            ],
        ),
    );
}

/// The results document kept in the results workbook's hidden sheet.
fn document_of(results_file: &Path) -> Value {
    let mut book = calamine::open_workbook_auto(results_file).expect("the results workbook opens");
    let sheet = book
        .sheets_metadata()
        .iter()
        .find(|sheet| sheet.name == "Results document")
        .cloned()
        .expect("a results document sheet");
    assert_eq!(sheet.visible, SheetVisible::Hidden, "the document sheet is hidden");
    let range = book.worksheet_range("Results document").expect("the sheet reads");
    let mut rows = range.rows();
    let first = rows.next().expect("a first row");
    assert_eq!(first[0], Data::String("trialyst results document".into()));
    let text: String = rows
        .map(|row| match &row[0] {
            Data::String(piece) => piece.clone(),
            other => panic!("not a piece of the document: {other:?}"),
        })
        .collect();
    serde_json::from_str(&text).expect("the document is JSON")
}

fn origin_of<'d>(document: &'d Value, key: &str) -> &'d str {
    document["settings_sources"]
        .as_array()
        .and_then(|pairs| pairs.iter().find(|pair| pair[0] == key))
        .and_then(|pair| pair[1].as_str())
        .unwrap_or_else(|| panic!("no source for '{key}' in {}", document["settings_sources"]))
}

#[test]
fn run_watch_and_serve_put_the_results_in_one_place_with_one_provenance() {
    let root = temp_folder();

    // trialyst run, from outside the folder.
    let run_folder = trial_folder(root.path(), "run");
    let ran = trialyst(root.path(), &["run", "--json", "run"]);
    assert_eq!(ran.code(), 0, "{}", ran.report());
    let line: Value = serde_json::from_str(ran.stdout().trim()).expect("one JSON line");
    // Paths are printed as given, relative to where run was started.
    let run_results = root.path().join(line["results_file"].as_str().expect("a results file"));

    // trialyst watch on the folder: the workbook is taken up on start.
    let watch_folder = trial_folder(root.path(), "watch");
    let watching = Watching::start(&watch_folder, &root.path().join("watch.log"), &[], &[]);
    let watch_results = watch_folder.join(RESULTS_IN_FOLDER);
    wait_for_file(&watch_results, &watching);
    watching.wait_for_log("analysed bath trial.xlsx", 1);
    drop(watching);

    // trialyst serve, whose working folder is not the workbook's.
    let serve_folder = trial_folder(root.path(), "serve");
    let workbook = serve_folder.join("bath trial.xlsx");
    let mut session = Session::start();
    session.initialize();
    let analysed = session.request("trialyst/analyseWorkbook", json!({"path": workbook}));
    let written = session.request("trialyst/writeResults", json!({"path": workbook}));
    let serve_results = PathBuf::from(written["result"]["resultsFile"].as_str().expect("a results file"));
    // A relative outputFolder is taken from the workbook's folder.
    let elsewhere = session.request(
        "trialyst/writeResults",
        json!({"path": workbook, "outputFolder": "checked"}),
    );
    assert_eq!(session.finish(), Some(0));

    // One place, relative to each workbook's folder.
    for (results, folder) in [
        (&run_results, &run_folder),
        (&watch_results, &watch_folder),
        (&serve_results, &serve_folder),
    ] {
        let inside = results
            .strip_prefix(folder)
            .unwrap_or_else(|_| panic!("{} is not in {}", results.display(), folder.display()));
        assert_eq!(inside, Path::new(RESULTS_IN_FOLDER));
        assert!(results.is_file(), "{}", results.display());
        crate::common::keep_output(results);
    }
    assert_eq!(
        elsewhere["result"]["resultsFile"],
        serve_folder
            .join("checked")
            .join("bath trial.results.xlsx")
            .display()
            .to_string(),
        "{elsewhere}"
    );

    // One set of settings, one provenance, the same figures.
    let documents: Vec<Value> = [&run_results, &watch_results, &serve_results]
        .iter()
        .map(|path| document_of(path))
        .collect();
    let run = &documents[0];
    assert_eq!(run["settings"]["confidence"], 0.9);
    assert_eq!(run["settings"]["out_dir"], "out");
    assert_eq!(origin_of(run, "confidence"), "folder settings file");
    assert_eq!(origin_of(run, "output folder"), "folder settings file");
    // The 90% intervals the file asked for were used.
    assert_eq!(run["responses"][0]["one_way"]["confidence"], 0.9);
    for (other, name) in documents[1..].iter().zip(["watch", "serve"]) {
        assert_eq!(other["settings"], run["settings"], "settings through {name}");
        assert_eq!(
            other["settings_sources"], run["settings_sources"],
            "provenance through {name}"
        );
        assert_eq!(
            other["source"]["sha256"], run["source"]["sha256"],
            "the same workbook through {name}"
        );
        assert_eq!(other["responses"], run["responses"], "figures through {name}");
    }
    // analyseWorkbook reads the same folder settings as writeResults.
    assert_eq!(
        analysed["result"]["settings_sources"], run["settings_sources"],
        "{analysed}"
    );
}

#[test]
fn a_watcher_with_sub_folders_takes_the_nearest_folder_settings() {
    let root = temp_folder();
    // The watched folder's own file, and a nearer one in a sub-folder.
    let watched = trial_folder(root.path(), "line");
    let nested = trial_folder(&watched, "week 2");
    std::fs::write(
        nested.join("trialyst.toml"),
        "confidence = 0.99\noutput_folder = \"week out\"\n",
    )
    .expect("nested settings written");
    let watching = Watching::start(&watched, &root.path().join("watch.log"), &["--recursive"], &[]);
    let top_results = watched.join(RESULTS_IN_FOLDER);
    let nested_results = nested.join("week out").join("bath trial.results.xlsx");
    wait_for_file(&top_results, &watching);
    wait_for_file(&nested_results, &watching);
    watching.wait_for_log("analysed week 2/bath trial.xlsx", 1);
    drop(watching);
    let top = document_of(&top_results);
    let inner = document_of(&nested_results);
    assert_eq!(top["settings"]["confidence"], 0.9);
    assert_eq!(inner["settings"]["confidence"], 0.99);
    assert_eq!(origin_of(&inner, "confidence"), "folder settings file");
    // `run` over the same tree finds the same file for each workbook.
    let ran = trialyst(root.path(), &["run", "--json", "--recursive", "--no-write", "line"]);
    assert_eq!(ran.code(), 0, "{}", ran.report());
    let confidences: Vec<Value> = ran
        .stdout()
        .lines()
        .map(|line| serde_json::from_str::<Value>(line).expect("a JSON line")["settings"]["confidence"].clone())
        .collect();
    assert_eq!(confidences, vec![json!(0.9), json!(0.99)]);
}

#[test]
fn a_polling_watcher_holds_back_a_workbook_under_a_bad_nested_file_until_it_is_fixed() {
    let root = temp_folder();
    let watched = trial_folder(root.path(), "polled");
    let nested = trial_folder(&watched, "week 3");
    std::fs::write(nested.join("trialyst.toml"), "confidence = 0.99\ncolour = \"red\"\n").expect("written");
    let watching = Watching::start(
        &watched,
        &root.path().join("watch.log"),
        &["--recursive", "--poll", "0.2"],
        &[],
    );
    wait_for_file(&watched.join(RESULTS_IN_FOLDER), &watching);
    watching.wait_for_log("held back until the folder settings file is fixed", 1);
    let log = watching.log_text();
    assert!(log.contains("colour") && log.contains("line 2"), "{log}");
    // The nearest file alone applies: fixed, it names no output folder, so
    // the results go beside the workbook.
    std::fs::write(nested.join("trialyst.toml"), "confidence = 0.99\n").expect("fixed");
    let nested_results = nested.join("bath trial.results.xlsx");
    wait_for_file(&nested_results, &watching);
    drop(watching);
    assert_eq!(document_of(&nested_results)["settings"]["confidence"], 0.99);
}
