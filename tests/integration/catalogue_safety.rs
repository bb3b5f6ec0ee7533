//! The hostile catalogue, continued: what an attacker or a careless user can
//! do around the parsers. Nothing we did not write is replaced, output
//! folders stay where they belong, special files and cut-off pipes do not
//! hang or crash the program. Each case runs the real program, checks the
//! exit code, the words of the message and the place, that the originals
//! are unchanged, and that nothing was written outside the test's folder.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use crate::common::{long_rows, put_rows, sha256_of, temp_folder, trialyst, trialyst_path, write_rows, Put, Run};
use crate::hostile::STALL_LIMIT;

/// Every file under `folder` with its SHA-256: compared before and after a
/// run to prove what changed and that nothing else did.
fn tree(folder: &Path) -> BTreeMap<PathBuf, String> {
    let mut found = BTreeMap::new();
    let mut pending = vec![folder.to_path_buf()];
    while let Some(current) = pending.pop() {
        let Ok(entries) = std::fs::read_dir(&current) else {
            continue;
        };
        for entry in entries.filter_map(Result::ok) {
            let path = entry.path();
            let Ok(kind) = entry.file_type() else { continue };
            if kind.is_dir() {
                pending.push(path);
            } else if kind.is_file() {
                found.insert(
                    path.strip_prefix(folder).unwrap_or(&path).to_path_buf(),
                    sha256_of(&path),
                );
            } else {
                found.insert(
                    path.strip_prefix(folder).unwrap_or(&path).to_path_buf(),
                    "special".into(),
                );
            }
        }
    }
    found
}

/// Two ovens, four hardness readings each (invented).
fn trial_rows() -> Vec<Vec<Put>> {
    long_rows(
        "Oven",
        "Hardness",
        &[
            ("North", &[10.1, 10.4, 9.9, 10.2]),
            ("South", &[11.0, 11.3, 10.8, 11.2]),
        ],
    )
}

/// A trial workbook with a `trialyst settings` sheet holding `pairs`,
/// hidden when `hidden` is set.
fn trial_with_settings(path: &Path, pairs: &[(&str, &str)], hidden: bool) {
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Runs").expect("named");
    put_rows(sheet, &trial_rows());
    let settings = book.add_worksheet();
    settings.set_name("trialyst settings").expect("named");
    for (row, (key, value)) in pairs.iter().enumerate() {
        settings.write_string(row as u32, 0, *key).expect("writable");
        settings.write_string(row as u32, 1, *value).expect("writable");
    }
    if hidden {
        settings.set_hidden(true);
    }
    book.save(path).expect("saved");
}

/// The JSON lines of a run.
fn json_lines(run: &Run) -> Vec<serde_json::Value> {
    run.stdout()
        .lines()
        .map(|line| serde_json::from_str(line).unwrap_or_else(|error| panic!("not JSON ({error}){}", run.report())))
        .collect()
}

fn no_panic(run: &Run) {
    assert!(!run.stderr().contains("panicked"), "{}", run.report());
}

#[test]
fn a_rollup_named_as_an_input_is_refused_and_the_input_kept() {
    let top = temp_folder();
    let folder = top.path().join("week");
    std::fs::create_dir_all(&folder).expect("made");
    write_rows(&folder.join("monday.xlsx"), "Runs", &trial_rows());
    write_rows(&folder.join("tuesday.xlsx"), "Runs", &trial_rows());
    let before = tree(top.path());
    let run = trialyst(top.path(), &["run", "week", "--rollup", "week/tuesday.xlsx"]);
    run.expect_code(2);
    no_panic(&run);
    assert!(
        run.stderr().contains("is one of the workbooks to analyse"),
        "{}",
        run.report()
    );
    assert!(run.stderr().contains("tuesday.xlsx"), "{}", run.report());
    assert_eq!(tree(top.path()), before, "nothing may be written or changed");
}

#[test]
fn a_file_we_did_not_write_at_the_results_name_is_kept() {
    let folder = temp_folder();
    write_rows(&folder.path().join("line 4.xlsx"), "Runs", &trial_rows());
    // Someone's own workbook that happens to carry the results name.
    write_rows(
        &folder.path().join("line 4.results.xlsx"),
        "Notes",
        &[vec![Put::Text("my notes")]],
    );
    let before = tree(folder.path());
    let run = trialyst(folder.path(), &["run", "line 4.xlsx"]);
    run.expect_code(1);
    no_panic(&run);
    assert!(
        run.stderr().contains("refusing to replace") && run.stderr().contains("not written by trialyst"),
        "{}",
        run.report()
    );
    assert!(run.stderr().contains("line 4.results.xlsx"), "{}", run.report());
    assert_eq!(tree(folder.path()), before);
}

#[test]
fn a_read_only_results_workbook_is_kept_and_our_own_is_replaced() {
    let folder = temp_folder();
    write_rows(&folder.path().join("cure.xlsx"), "Runs", &trial_rows());
    trialyst(folder.path(), &["run", "cure.xlsx"]).expect_code(0);
    // Our own results are replaced on the next run.
    trialyst(folder.path(), &["run", "cure.xlsx"]).expect_code(0);
    let results = folder.path().join("cure.results.xlsx");
    let mut permissions = std::fs::metadata(&results).expect("there").permissions();
    permissions.set_readonly(true);
    std::fs::set_permissions(&results, permissions).expect("made read-only");
    let before = tree(folder.path());
    let run = trialyst(folder.path(), &["run", "cure.xlsx"]);
    run.expect_code(1);
    assert!(run.stderr().contains("it is read-only"), "{}", run.report());
    assert_eq!(tree(folder.path()), before);
}

#[test]
fn workbooks_sharing_a_stem_or_a_name_never_share_a_results_workbook() {
    let top = temp_folder();
    let folder = top.path().join("in");
    for sub in ["a", "b"] {
        std::fs::create_dir_all(folder.join(sub)).expect("made");
        write_rows(&folder.join(sub).join("w.xlsx"), "Runs", &trial_rows());
    }
    write_rows(&folder.join("week.xlsx"), "Runs", &trial_rows());
    // An xlsx container named .xlsm is read by its contents.
    write_rows(&folder.join("week.xlsm"), "Runs", &trial_rows());
    let originals = tree(&folder);
    let run = trialyst(
        top.path(),
        &[
            "run",
            "in",
            "--recursive",
            "--out-dir",
            "out",
            "--json",
            "--rollup",
            "out/all.rollup.xlsx",
        ],
    );
    run.expect_code(0);
    let written: Vec<String> = json_lines(&run)
        .iter()
        .map(|line| line["results_file"].as_str().unwrap_or_default().to_string())
        .collect();
    let mut distinct = written.clone();
    distinct.sort();
    distinct.dedup();
    assert_eq!(distinct.len(), 4, "four inputs, four results workbooks: {written:?}");
    for expected in [
        "out/a/w.xlsx.results.xlsx",
        "out/b/w.xlsx.results.xlsx",
        "out/week.xlsx.results.xlsx",
        "out/week.xlsm.results.xlsx",
    ] {
        assert!(
            top.path().join(expected).is_file(),
            "missing {expected}{}",
            run.report()
        );
    }
    assert_eq!(tree(&folder), originals, "the inputs are unchanged");
    // Beside their workbooks (no --out-dir), the same names stay apart.
    let run = trialyst(top.path(), &["run", "in", "--recursive"]);
    run.expect_code(0);
    for expected in [
        "in/a/w.results.xlsx",
        "in/b/w.results.xlsx",
        "in/week.xlsx.results.xlsx",
        "in/week.xlsm.results.xlsx",
    ] {
        assert!(
            top.path().join(expected).is_file(),
            "missing {expected}{}",
            run.report()
        );
    }
}

#[test]
fn an_output_folder_setting_outside_the_workbooks_folder_is_refused() {
    let top = temp_folder();
    let folder = top.path().join("shared");
    std::fs::create_dir_all(&folder).expect("made");
    trial_with_settings(
        &folder.join("escape.xlsx"),
        &[("output folder", "../../elsewhere")],
        true,
    );
    let before = tree(top.path());
    let run = trialyst(&folder, &["run", "escape.xlsx", "--json"]);
    run.expect_code(1);
    no_panic(&run);
    let line = &json_lines(&run)[0];
    let error = line["error"].as_str().unwrap_or_default();
    assert!(error.contains("outside the workbook's folder"), "{error}");
    assert!(error.contains("../../elsewhere"), "{error}");
    assert_eq!(tree(top.path()), before, "nothing written anywhere");
    assert!(!top.path().join("../elsewhere").exists());

    // A folder allowed on the command line admits it.
    let allowed = top.path().join("reports");
    trial_with_settings(&folder.join("allowed.xlsx"), &[("output folder", "../reports")], false);
    let run = trialyst(
        &folder,
        &[
            "run",
            "allowed.xlsx",
            "--allow-output-root",
            allowed.to_str().expect("UTF-8 path"),
        ],
    );
    run.expect_code(0);
    assert!(allowed.join("allowed.results.xlsx").is_file(), "{}", run.report());
}

#[test]
fn a_hidden_settings_sheet_is_reported_as_such() {
    let folder = temp_folder();
    trial_with_settings(&folder.path().join("quiet.xlsx"), &[("confidence", "90%")], true);
    let run = trialyst(folder.path(), &["run", "quiet.xlsx", "--json", "--no-write"]);
    run.expect_code(0);
    let line = &json_lines(&run)[0];
    let findings = line["findings"].as_array().cloned().unwrap_or_default();
    let hidden = findings
        .iter()
        .find(|finding| finding["message"].as_str().unwrap_or_default().contains("is hidden"))
        .unwrap_or_else(|| panic!("no finding about the hidden sheet{}", run.report()));
    assert_eq!(hidden["sheet"], "trialyst settings", "{hidden}");
}

#[test]
fn plan_keeps_an_existing_file_unless_forced() {
    let folder = temp_folder();
    let arguments = [
        "plan",
        "--factor",
        "Temperature=160,180",
        "--factor",
        "Time=20,30",
        "--response",
        "Yield (%)",
        "--seed",
        "7",
        "--out",
        "plan.xlsx",
    ];
    trialyst(folder.path(), &arguments).expect_code(0);
    let first = sha256_of(&folder.path().join("plan.xlsx"));
    let run = trialyst(folder.path(), &arguments);
    run.expect_code(1);
    assert!(
        run.stderr().contains("already exists") && run.stderr().contains("--force"),
        "{}",
        run.report()
    );
    assert_eq!(sha256_of(&folder.path().join("plan.xlsx")), first);
    let mut forced = arguments.to_vec();
    forced.push("--force");
    trialyst(folder.path(), &forced).expect_code(0);
}

/// Runs the program with a bound on its time; a hang fails the test.
fn run_bounded(folder: &Path, args: &[&str]) -> (std::process::Output, Duration) {
    let started = Instant::now();
    let mut child = std::process::Command::new(trialyst_path())
        .args(args)
        .current_dir(folder)
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("started");
    loop {
        if child.try_wait().expect("waited").is_some() {
            break;
        }
        if started.elapsed() > STALL_LIMIT {
            let _ = child.kill();
            panic!("trialyst {args:?} hung");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    (child.wait_with_output().expect("output"), started.elapsed())
}

#[cfg(unix)]
#[test]
fn named_pipes_and_devices_named_as_workbooks_are_refused_without_waiting() {
    let folder = temp_folder();
    let fifo = folder.path().join("pipe.xlsx");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("mkfifo runs");
    assert!(made.success());
    std::os::unix::fs::symlink("/dev/zero", folder.path().join("zeros.xlsx")).expect("linked");
    write_rows(&folder.path().join("good.xlsx"), "Runs", &trial_rows());
    for (name, words) in [("pipe.xlsx", "named pipe"), ("zeros.xlsx", "device")] {
        for command in [vec!["run", "--json", name], vec!["inspect", name]] {
            let (output, elapsed) = run_bounded(folder.path(), &command);
            let text = format!(
                "{}{}",
                String::from_utf8_lossy(&output.stdout),
                String::from_utf8_lossy(&output.stderr)
            );
            assert_eq!(output.status.code(), Some(1), "{command:?}: {text}");
            assert!(
                text.contains("not a regular file") && text.contains(words),
                "{command:?}: {text}"
            );
            assert!(!text.contains("panicked"), "{text}");
            assert!(elapsed < STALL_LIMIT);
        }
    }
    // A batch over the folder finishes, prints every line and analyses the good one.
    let (output, _) = run_bounded(folder.path(), &["run", ".", "--json", "--no-write"]);
    assert_eq!(output.status.code(), Some(1));
    assert_eq!(String::from_utf8_lossy(&output.stdout).lines().count(), 3);
}

#[cfg(unix)]
#[test]
fn a_closed_standard_output_ends_the_program_quietly() {
    let folder = temp_folder();
    write_rows(&folder.path().join("good.xlsx"), "Runs", &trial_rows());
    for command in [
        "inspect good.xlsx",
        "plan --factor A=1,2 --factor B=1,2 --response Y --json --out p.xlsx",
    ] {
        let output = std::process::Command::new("/bin/sh")
            .arg("-c")
            .arg(format!("\"$0\" {command} | true"))
            .arg(trialyst_path())
            .current_dir(folder.path())
            .output()
            .expect("the shell runs");
        let stderr = String::from_utf8_lossy(&output.stderr);
        assert!(!stderr.contains("panicked"), "{command}: {stderr}");
    }
}

/// Starts `trialyst serve --listen 127.0.0.1:0` with `secret` in its
/// environment; returns the child and the address it listens on.
fn start_listening(secret: Option<&str>, extra: &[&str]) -> (std::process::Child, String) {
    use std::io::BufRead;
    let mut command = std::process::Command::new(trialyst_path());
    command
        .args(["serve", "--listen", "127.0.0.1:0"])
        .args(extra)
        .env_remove("TRIALYST_SERVE_TOKEN")
        .stdin(std::process::Stdio::null())
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped());
    if let Some(secret) = secret {
        command.env("TRIALYST_SERVE_TOKEN", secret);
    }
    let mut child = command.spawn().expect("serve starts");
    let mut stderr = std::io::BufReader::new(child.stderr.take().expect("piped"));
    let mut line = String::new();
    let _ = stderr.read_line(&mut line);
    // Keep reading stderr so the server never blocks on it.
    std::thread::spawn(move || {
        let mut rest = String::new();
        while stderr.read_line(&mut rest).is_ok_and(|read| read > 0) {}
    });
    let address = line.trim().rsplit(' ').next().unwrap_or_default().to_string();
    (child, address)
}

/// Everything the server sends on `stream` until it closes or `wait` passes.
fn read_all(stream: &mut std::net::TcpStream, wait: Duration) -> String {
    use std::io::Read;
    let _ = stream.set_read_timeout(Some(wait));
    let mut output = Vec::new();
    let mut chunk = [0u8; 4096];
    loop {
        match stream.read(&mut chunk) {
            Ok(0) | Err(_) => break,
            Ok(read) => output.extend_from_slice(&chunk[..read]),
        }
    }
    String::from_utf8_lossy(&output).into_owned()
}

/// Sends `initialize` and waits for its answer, as a client does, then
/// `initialized`.
fn initialise(stream: &mut std::net::TcpStream) {
    use std::io::{Read, Write};
    let initialize =
        serde_json::json!({"jsonrpc": "2.0", "id": 1, "method": "initialize", "params": {"capabilities": {}}});
    let _ = stream.write_all(&framed(&initialize));
    let _ = stream.set_read_timeout(Some(Duration::from_secs(20)));
    let mut output = Vec::new();
    let mut chunk = [0u8; 4096];
    while !String::from_utf8_lossy(&output).contains("\"serverInfo\"") {
        match stream.read(&mut chunk) {
            Ok(0) | Err(_) => panic!("no answer to initialize: {}", String::from_utf8_lossy(&output)),
            Ok(read) => output.extend_from_slice(&chunk[..read]),
        }
    }
    let _ = stream.write_all(&framed(
        &serde_json::json!({"jsonrpc": "2.0", "method": "initialized", "params": {}}),
    ));
}

/// Reads until the answer with `id` has arrived; returns what was read.
fn answer_to(stream: &mut std::net::TcpStream, id: &serde_json::Value) -> String {
    use std::io::Read;
    let _ = stream.set_read_timeout(Some(Duration::from_secs(30)));
    let needle = format!("\"id\":{id}");
    let mut output = Vec::new();
    let mut chunk = [0u8; 4096];
    while !String::from_utf8_lossy(&output).contains(&needle) {
        match stream.read(&mut chunk) {
            Ok(0) | Err(_) => break,
            Ok(read) => output.extend_from_slice(&chunk[..read]),
        }
    }
    String::from_utf8_lossy(&output).into_owned()
}

fn framed(body: &serde_json::Value) -> Vec<u8> {
    let body = body.to_string();
    format!("Content-Length: {}\r\n\r\n{body}", body.len()).into_bytes()
}

#[test]
fn a_listening_server_lets_in_only_the_client_with_its_secret() {
    use std::io::Write;
    // No secret in the environment: the server does not start.
    let (mut child, _) = start_listening(None, &[]);
    assert_eq!(child.wait().expect("ends").code(), Some(2));

    let secret = "secret of the parent, for this test";
    let folder = temp_folder();
    write_rows(&folder.path().join("private.xlsx"), "Runs", &trial_rows());
    let before = tree(folder.path());
    let (mut child, address) = start_listening(Some(secret), &[]);
    assert!(address.starts_with("127.0.0.1:"), "{address}");
    // Connect and close at once: the server goes on.
    drop(std::net::TcpStream::connect(&address).expect("accepted"));
    // A browser-style POST carrying a request: closed, nothing executed.
    let write_request = serde_json::json!({"jsonrpc": "2.0", "id": 1, "method": "trialyst/writeResults",
        "params": {"path": folder.path().join("private.xlsx")}});
    let body = write_request.to_string();
    let mut post = std::net::TcpStream::connect(&address).expect("accepted");
    let _ = post.write_all(
        format!(
            "POST / HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: text/plain\r\nContent-Length: {}\r\n\r\n{body}",
            body.len()
        )
        .as_bytes(),
    );
    assert_eq!(
        read_all(&mut post, Duration::from_secs(10)),
        "",
        "an HTTP client gets nothing"
    );
    // The wrong secret: closed, nothing answered.
    let mut wrong = std::net::TcpStream::connect(&address).expect("accepted");
    let _ = wrong.write_all(b"trialyst-token secret of the parent, for this tesT\n");
    let _ = wrong.write_all(&framed(&write_request));
    assert_eq!(read_all(&mut wrong, Duration::from_secs(10)), "");
    // A silent connection is closed after the secret's time limit.
    let started = Instant::now();
    let mut silent = std::net::TcpStream::connect(&address).expect("accepted");
    assert_eq!(read_all(&mut silent, Duration::from_secs(20)), "");
    assert!(started.elapsed() < Duration::from_secs(15), "{:?}", started.elapsed());
    assert_eq!(tree(folder.path()), before, "nothing was written");
    assert!(child.try_wait().expect("polled").is_none(), "the server still runs");

    // The client with the secret gets its session.
    let mut client = std::net::TcpStream::connect(&address).expect("accepted");
    let _ = client.write_all(format!("trialyst-token {secret}\n").as_bytes());
    initialise(&mut client);
    let shutdown = serde_json::json!({"jsonrpc": "2.0", "id": 2, "method": "shutdown"});
    let exit = serde_json::json!({"jsonrpc": "2.0", "method": "exit"});
    let _ = client.write_all(&framed(&shutdown));
    let answer = answer_to(&mut client, &serde_json::json!(2));
    assert!(answer.contains("\"result\":null"), "{answer}");
    let _ = client.write_all(&framed(&exit));
    let _ = read_all(&mut client, Duration::from_secs(20));
    let deadline = Instant::now() + Duration::from_secs(20);
    while child.try_wait().expect("polled").is_none() && Instant::now() < deadline {
        std::thread::sleep(Duration::from_millis(20));
    }
    assert_eq!(
        child.try_wait().expect("polled").and_then(|status| status.code()),
        Some(0)
    );
}

#[test]
fn a_confined_server_refuses_paths_and_folders_outside_its_roots() {
    use std::io::Write;
    let top = temp_folder();
    let allowed = top.path().join("allowed");
    let private = top.path().join("private");
    std::fs::create_dir_all(&allowed).expect("made");
    std::fs::create_dir_all(&private).expect("made");
    write_rows(&allowed.join("line.xlsx"), "Runs", &trial_rows());
    write_rows(&private.join("secret.xlsx"), "Runs", &trial_rows());
    let before = tree(top.path());
    let secret = "another secret for this test only";
    let (mut child, address) = start_listening(Some(secret), &["--allow-root", allowed.to_str().expect("UTF-8")]);
    let mut client = std::net::TcpStream::connect(&address).expect("accepted");
    let _ = client.write_all(format!("trialyst-token {secret}\n").as_bytes());
    initialise(&mut client);
    let messages = [
        serde_json::json!({"jsonrpc": "2.0", "id": 2, "method": "trialyst/analyseWorkbook",
            "params": {"path": private.join("secret.xlsx")}}),
        serde_json::json!({"jsonrpc": "2.0", "id": 3, "method": "trialyst/analyseWorkbook",
            "params": {"path": allowed.join("..").join("private").join("secret.xlsx")}}),
        serde_json::json!({"jsonrpc": "2.0", "id": 4, "method": "trialyst/writeResults",
            "params": {"path": allowed.join("line.xlsx"), "outputFolder": "../private"}}),
        serde_json::json!({"jsonrpc": "2.0", "id": 5, "method": "trialyst/analyseWorkbook",
            "params": {"uri": "file://otherhost/share/line.xlsx"}}),
        serde_json::json!({"jsonrpc": "2.0", "id": 6, "method": "shutdown"}),
        serde_json::json!({"jsonrpc": "2.0", "method": "exit"}),
    ];
    let mut answers = String::new();
    for message in &messages {
        let _ = client.write_all(&framed(message));
        if let Some(id) = message.get("id").filter(|_| message["method"] != "shutdown") {
            let answer = answer_to(&mut client, id);
            assert!(answer.contains("\"error\""), "request {id} must be refused: {answer}");
            answers.push_str(&answer);
        }
    }
    let _ = read_all(&mut client, Duration::from_secs(20));
    let _ = child.wait();
    assert!(answers.contains("outside the folders this server may use"), "{answers}");
    assert!(answers.contains("outside the workbook's folder"), "{answers}");
    assert_eq!(tree(top.path()), before, "nothing was written");
}

#[cfg(unix)]
#[test]
fn links_are_followed_only_inside_the_folder_and_loops_end() {
    let top = temp_folder();
    let folder = top.path().join("lines");
    let outside = top.path().join("private");
    std::fs::create_dir_all(folder.join("sub")).expect("made");
    std::fs::create_dir_all(&outside).expect("made");
    write_rows(&folder.join("sub").join("real.xlsx"), "Runs", &trial_rows());
    write_rows(&outside.join("secret.xlsx"), "Runs", &trial_rows());
    std::os::unix::fs::symlink(&folder, folder.join("sub").join("loop")).expect("linked");
    std::os::unix::fs::symlink(top.path(), folder.join("up")).expect("linked");
    std::os::unix::fs::symlink(outside.join("secret.xlsx"), folder.join("borrowed.xlsx")).expect("linked");
    let before = tree(&outside);
    let (output, elapsed) = run_bounded(top.path(), &["run", "lines", "--recursive", "--json", "--no-write"]);
    assert!(elapsed < STALL_LIMIT);
    let stdout = String::from_utf8_lossy(&output.stdout);
    let analysed: Vec<&str> = stdout
        .lines()
        .filter(|line| line.contains("\"status\":\"analysed\""))
        .collect();
    assert_eq!(analysed.len(), 1, "the one real workbook, once: {stdout}");
    assert!(analysed[0].contains("real.xlsx"));
    assert!(
        stdout.contains("borrowed.xlsx") && stdout.contains("outside the folder named was not followed"),
        "{stdout}"
    );
    assert!(!stdout.contains("secret.xlsx\""), "{stdout}");
    assert_eq!(tree(&outside), before);
}

#[test]
fn a_contrast_nested_thousands_deep_is_a_finding_not_a_crash() {
    let folder = temp_folder();
    let deep = format!("{}North - South{}", "(".repeat(5_000), ")".repeat(5_000));
    trial_with_settings(&folder.path().join("deep.xlsx"), &[("contrast", deep.as_str())], false);
    write_rows(&folder.path().join("plain.xlsx"), "Runs", &trial_rows());
    let (output, _) = run_bounded(folder.path(), &["run", ".", "--json", "--no-write"]);
    let stdout = String::from_utf8_lossy(&output.stdout);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(!stderr.contains("overflow") && !stderr.contains("panicked"), "{stderr}");
    assert_eq!(stdout.lines().count(), 2, "both workbooks reported: {stdout}{stderr}");
    assert!(stdout.contains("nested more than 64 deep"), "{stdout}");
    // The same text on the command line is a usage error with the message.
    let (output, _) = run_bounded(folder.path(), &["run", "plain.xlsx", "--no-write", "--contrast", &deep]);
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(!stderr.contains("overflow") && !stderr.contains("panicked"), "{stderr}");
}

#[test]
fn newer_error_values_are_error_cells_at_their_address() {
    use crate::hostile::{sheet_xml, two_column_rows, write_xlsx_parts, EMPTY_SHARED_STRINGS};
    let folder = temp_folder();
    // Condition / Weight in A1:B21 (invented); B3..B8 hold the newer error values.
    let errors = [
        "#SPILL!",
        "#CALC!",
        "#FIELD!",
        "#BLOCKED!",
        "#UNKNOWN!",
        "#GETTING_DATA",
    ];
    let rows = two_column_rows(("Condition", "Weight"), ("old", "new"), |row| {
        errors
            .get(row.wrapping_sub(3))
            .map(|error| format!(r#"<c r="B{row}" t="e"><v>{error}</v></c>"#))
    });
    write_xlsx_parts(
        &folder.path().join("newer.xlsx"),
        &sheet_xml(&rows),
        EMPTY_SHARED_STRINGS,
    );
    let run = trialyst(folder.path(), &["run", "newer.xlsx", "--json", "--no-write"]);
    no_panic(&run);
    let line = &json_lines(&run)[0];
    let findings = line["findings"].as_array().cloned().unwrap_or_default();
    for (index, error) in errors.iter().enumerate() {
        let cell = format!("B{}", index + 3);
        assert!(
            findings.iter().any(|finding| finding["cell"] == cell.as_str()
                && finding["message"].as_str().unwrap_or_default().contains(error)),
            "no finding for {error} at {cell}: {findings:#?}{}",
            run.report()
        );
    }
}
