//! The whole loop of sequential trials end to end through the real program:
//! a two-level screen (a resolution III fraction with centre runs) ->
//! `trialyst next` (fold-over) -> `next` (axial and centre runs completing a
//! central composite plan) -> `next` (confirmation runs) -> `run`, each stage's
//! plan filled from a known quadratic model with a fixed noise sequence, and
//! checked: the runs already made keep their results, the new runs form the
//! next block, the recommended settings end near the model's true optimum and
//! the confirmation runs are judged.

use std::path::Path;
use std::process::Command;

use calamine::Data;

use crate::plan::{column_of, read_all, runs_sheet, write_all};

/// The known model, in coded units x = (T - 160)/10, (t - 15)/5, (p - 2)/1
/// (an invented process). Its stationary point solves 4 - 6 x1 + x2 = 0,
/// 3 + x1 - 5 x2 = 0, 1.5 - 3 x3 = 0: x = (23/29, 22/29, 1/2), a maximum
/// (the quadratic part is negative definite), worked by hand.
fn model(temperature: f64, time: f64, pressure: f64) -> f64 {
    let (x1, x2, x3) = ((temperature - 160.0) / 10.0, (time - 15.0) / 5.0, pressure - 2.0);
    80.0 + 4.0 * x1 + 3.0 * x2 + 1.5 * x3 - 3.0 * x1 * x1 - 2.5 * x2 * x2 - 1.5 * x3 * x3 + x1 * x2
}

const TRUE_OPTIMUM_CODED: [f64; 3] = [23.0 / 29.0, 22.0 / 29.0, 0.5];
const NOISE_SD: f64 = 0.3;

/// A fixed normal noise sequence (SplitMix64 and Box-Muller), so every run of the test
/// sees the same data.
struct Noise(u64);

impl Noise {
    fn uniform(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }

    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform().max(1e-300), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

fn number(cell: &Data) -> Option<f64> {
    match cell {
        Data::Float(value) => Some(*value),
        Data::Int(value) => Some(*value as f64),
        _ => None,
    }
}

/// Fills every blank result of the plan's runs from the model; returns the runs'
/// (settings, result, was it already filled).
fn fill(plan: &Path, filled: &Path, noise: &mut Noise) -> Vec<([f64; 3], f64, bool)> {
    let mut sheets = read_all(plan);
    let rows = runs_sheet(&mut sheets);
    let columns = ["Temperature", "Time", "Pressure", "Yield"].map(|header| column_of(rows, header));
    let mut seen = Vec::new();
    for row in rows.iter_mut().skip(3) {
        let Some(settings) = (0..3)
            .map(|index| row.get(columns[index]).and_then(number))
            .collect::<Option<Vec<f64>>>()
        else {
            continue;
        };
        while row.len() <= columns[3] {
            row.push(Data::Empty);
        }
        let settings = [settings[0], settings[1], settings[2]];
        let (value, before) = match number(&row[columns[3]]) {
            Some(value) => (value, true),
            None => {
                let value = ((model(settings[0], settings[1], settings[2]) + NOISE_SD * noise.normal()) * 1000.0)
                    .round()
                    / 1000.0;
                row[columns[3]] = Data::Float(value);
                (value, false)
            }
        };
        seen.push((settings, value, before));
    }
    write_all(&sheets, filled);
    seen
}

fn trialyst(folder: &Path, args: &[&str]) -> String {
    let output = Command::new(crate::common::trialyst_path())
        .args(args)
        .current_dir(folder)
        .output()
        .expect("trialyst runs");
    assert!(
        output.status.success(),
        "trialyst {args:?} failed: {}\n{}",
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
    String::from_utf8_lossy(&output.stdout).into_owned()
}

fn json_line(text: &str) -> serde_json::Value {
    serde_json::from_str(text.lines().find(|line| line.starts_with('{')).expect("a JSON line")).expect("JSON")
}

fn next(folder: &Path, from: &str, to: &str, seed: &str) -> serde_json::Value {
    json_line(&trialyst(
        folder,
        &[
            "next",
            from,
            "--direction",
            "higher",
            "--seed",
            seed,
            "--out",
            to,
            "--json",
        ],
    ))
}

/// The screen every test starts from: a 2^(3-1) half fraction of the three factors with
/// three centre runs, written as screen.xlsx.
fn plan_screen(dir: &Path) {
    trialyst(
        dir,
        &[
            "plan",
            "--factor",
            "Temperature=150,170",
            "--factor",
            "Time=10,20",
            "--factor",
            "Pressure=1,3",
            "--response",
            "Yield",
            "--runs",
            "4",
            "--centre-points",
            "3",
            "--seed",
            "1",
            "--out",
            "screen.xlsx",
        ],
    );
}

fn coded(settings: &[f64; 3]) -> [f64; 3] {
    [
        (settings[0] - 160.0) / 10.0,
        (settings[1] - 15.0) / 5.0,
        settings[2] - 2.0,
    ]
}

#[test]
fn screen_fold_over_composite_and_confirmation_end_at_the_true_optimum() {
    let folder = tempfile::tempdir().expect("temp dir");
    let dir = folder.path();
    let mut noise = Noise(20_261_204);
    plan_screen(dir);
    let screen = fill(&dir.join("screen.xlsx"), &dir.join("screen filled.xlsx"), &mut noise);
    assert_eq!(screen.len(), 7);

    // Stage 1: every main effect of the 2^(3-1) fraction is aliased with a
    // two-factor interaction, so the next trial is a fold-over.
    let first = next(dir, "screen filled.xlsx", "stage2.xlsx", "2");
    assert_eq!(first["step"], "fold-over", "{first}");
    assert_eq!(first["earlier_runs"], 7);
    assert_eq!(first["block"], 2);
    let stage2 = fill(&dir.join("stage2.xlsx"), &dir.join("stage2 filled.xlsx"), &mut noise);
    // The runs already made come back with their results, in their order.
    for (made, kept) in screen.iter().zip(&stage2) {
        assert_eq!((made.0, made.1), (kept.0, kept.1));
        assert!(kept.2, "a result already made must be filled in the next plan");
    }
    let new: Vec<[f64; 3]> = stage2[7..].iter().map(|run| coded(&run.0)).collect();
    assert_eq!(new.len(), first["new_runs"].as_u64().expect("count") as usize);
    // Joined with the fraction, the fold-over gives all eight corners of the cube.
    let mut corners: Vec<[f64; 3]> = stage2
        .iter()
        .map(|run| coded(&run.0))
        .filter(|x| x.iter().all(|v| v.abs() == 1.0))
        .collect();
    corners.sort_by(|a, b| a.partial_cmp(b).expect("finite"));
    corners.dedup();
    assert_eq!(corners.len(), 8, "{corners:?}");

    // Stage 2: the full cube with centre runs shows curvature: axial and centre
    // runs complete a central composite plan as block 3.
    let second = next(dir, "stage2 filled.xlsx", "stage3.xlsx", "3");
    assert_eq!(second["block"], 3, "{second}");
    assert!(
        second["step"].as_str().expect("step").contains("central composite"),
        "{second}"
    );
    let stage3 = fill(&dir.join("stage3.xlsx"), &dir.join("stage3 filled.xlsx"), &mut noise);
    for run in &stage3[stage2.len()..] {
        let x = coded(&run.0);
        let off_centre: Vec<f64> = x.iter().copied().filter(|v| v.abs() > 1e-6).collect();
        assert!(
            off_centre.len() <= 1,
            "an axial or centre run has at most one factor off centre: {x:?}"
        );
        if let [distance] = off_centre.as_slice() {
            assert!(distance.abs() > 1.0, "axial runs lie outside the cube: {x:?}");
        }
    }

    // Stage 3: the second-order fit finds the maximum inside the region and asks for
    // confirmation runs at the settings it recommends.
    let results = json_line(&trialyst(
        dir,
        &[
            "run",
            "stage3 filled.xlsx",
            "--direction",
            "higher",
            "--json",
            "--no-write",
        ],
    ));
    let second_order = results["responses"][0]["second_order"]
        .as_str()
        .expect("second-order reading");
    assert!(second_order.contains("a maximum"), "{second_order}");
    let third = next(dir, "stage3 filled.xlsx", "stage4.xlsx", "4");
    assert_eq!(third["step"], "confirmation runs", "{third}");
    assert_eq!(third["confirmation"], true);
    let stage4 = fill(&dir.join("stage4.xlsx"), &dir.join("stage4 filled.xlsx"), &mut noise);
    let confirm: Vec<[f64; 3]> = stage4[stage3.len()..].iter().map(|run| run.0).collect();
    assert_eq!(confirm.len(), 3);
    let x = coded(&confirm[0]);
    let distance = x
        .iter()
        .zip(TRUE_OPTIMUM_CODED)
        .map(|(a, b)| (a - b) * (a - b))
        .sum::<f64>()
        .sqrt();
    // Within 0.25 coded units of the true optimum (noise SD 0.3 against effects of 3 to 8).
    assert!(
        distance < 0.25,
        "recommended {confirm:?}, {distance} coded units from the optimum"
    );

    // Stage 4: the confirmation runs come back and the Summary says whether their
    // average fell in the interval predicted for them.
    let results = json_line(&trialyst(
        dir,
        &[
            "run",
            "stage4 filled.xlsx",
            "--direction",
            "higher",
            "--json",
            "--no-write",
        ],
    ));
    let response = &results["responses"][0];
    let second_order = response["second_order"].as_str().expect("second-order reading");
    assert!(second_order.contains("Confirmation (block 4, 3 runs"), "{second_order}");
    let mean = stage4[stage3.len()..].iter().map(|run| run.1).sum::<f64>() / 3.0;
    let inside = second_order.contains("inside the interval");
    assert!(
        inside || second_order.contains("outside the interval"),
        "{second_order}"
    );
    // Noise-free, the model's value at the confirmation settings; the runs drawn
    // with SD 0.3 average within 3 SD/sqrt(3) of it, so they should be judged inside.
    let truth = model(confirm[0][0], confirm[0][1], confirm[0][2]);
    assert!((mean - truth).abs() < 3.0 * NOISE_SD / 3f64.sqrt(), "{mean} vs {truth}");
    assert!(inside, "{second_order}");
    assert!(
        response["next_trial"].as_str().expect("next").contains("confirmed"),
        "{response}"
    );
}

#[test]
fn a_trial_with_no_recommendation_is_refused_with_each_response_s_reason() {
    let folder = tempfile::tempdir().expect("temp dir");
    let dir = folder.path();
    trialyst(
        dir,
        &[
            "plan",
            "--factor",
            "Supplier=North,South,East",
            "--response",
            "Yield",
            "--replicates",
            "3",
            "--seed",
            "5",
            "--out",
            "one.xlsx",
        ],
    );
    let mut sheets = read_all(&dir.join("one.xlsx"));
    let rows = runs_sheet(&mut sheets);
    let result = column_of(rows, "Yield");
    for (index, row) in rows.iter_mut().enumerate().skip(3) {
        while row.len() <= result {
            row.push(Data::Empty);
        }
        row[result] = Data::Float(50.0 + (index % 4) as f64);
    }
    write_all(&sheets, &dir.join("one filled.xlsx"));
    let output = Command::new(crate::common::trialyst_path())
        .args(["next", "one filled.xlsx"])
        .current_dir(dir)
        .output()
        .expect("trialyst runs");
    assert_eq!(output.status.code(), Some(1));
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert!(
        stderr.contains("no next trial to plan") && stderr.contains("'Yield'"),
        "{stderr}"
    );
    assert!(!dir.join("one filled next trial.xlsx").exists());
}

#[test]
fn the_protocol_writes_the_same_next_plan_beside_the_workbook() {
    let folder = tempfile::tempdir().expect("temp dir");
    let dir = folder.path();
    plan_screen(dir);
    fill(&dir.join("screen.xlsx"), &dir.join("screen filled.xlsx"), &mut Noise(7));
    let by_command = next(dir, "screen filled.xlsx", "by command.xlsx", "9");
    let mut session = crate::lsp::Session::start();
    session.initialize();
    let workbook = dir.join("screen filled.xlsx");
    let answer = session.request(
        "trialyst/nextPlan",
        serde_json::json!({"path": workbook.display().to_string(), "settings": {"direction": "higher"}, "seed": 9}),
    );
    let summary = &answer["result"]["summary"];
    assert_eq!(summary["step"], "fold-over", "{answer}");
    // The same plan as the command's: same runs, same id (the id hashes every run).
    assert_eq!(summary["plan"]["id"], by_command["plan"]["id"], "{answer}");
    let written = answer["result"]["planFile"].as_str().expect("planFile");
    assert!(
        Path::new(written).ends_with("screen filled next trial.xlsx"),
        "{written}"
    );
    assert!(Path::new(written).exists());
    let refused = session.request(
        "trialyst/nextPlan",
        serde_json::json!({"path": workbook.display().to_string(), "follow": "Hardness"}),
    );
    assert_eq!(refused["error"]["code"], -32602, "{refused}");
    assert_eq!(refused["error"]["data"]["field"], "params.follow", "{refused}");
    session.finish();
}
