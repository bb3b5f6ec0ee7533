//! Through the program: a response-surface trial's results workbook holds the contour
//! maps (PNG pictures on the sheet 'Surface maps'), and `size` answers for a central
//! composite plan's square terms. The trial is the invented cure trial of
//! `surface_lead`; the size reference is scipy 1.17.1 `stats.ncf.sf` with numpy 2.4.6
//! noncentralities (the engine's `analysis/surface_power/testdata` script).

use std::io::Read;

use crate::common::{put_rows, temp_folder, trialyst, Put, Run, CURE_TRIAL};

#[test]
fn the_results_workbook_of_a_surface_trial_holds_its_contour_map() {
    let folder = temp_folder();
    let mut rows = vec![vec![
        Put::Text("Cure temp (C)"),
        Put::Text("Cure time (min)"),
        Put::Text("Peel strength (N)"),
    ]];
    for run in CURE_TRIAL {
        rows.push(vec![Put::Number(run.0), Put::Number(run.1), Put::Number(run.2)]);
    }
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    sheet.set_name("Runs").expect("valid name");
    put_rows(sheet, &rows);
    book.save(folder.path().join("cure.xlsx")).expect("saved");
    let run = trialyst(folder.path(), &["run", "cure.xlsx", "--direction", "higher"]);
    run.expect_code(0);
    let written = std::fs::read(folder.path().join("cure.results.xlsx")).expect("results written");
    let mut archive = zip::ZipArchive::new(std::io::Cursor::new(written)).expect("a zip");
    let mut workbook = String::new();
    archive
        .by_name("xl/workbook.xml")
        .expect("workbook part")
        .read_to_string(&mut workbook)
        .expect("text");
    // Two factors: one pair, one picture.
    let names: Vec<&str> = workbook
        .split("<sheet name=\"")
        .skip(1)
        .filter_map(|rest| rest.split('"').next())
        .collect();
    let index = names
        .iter()
        .position(|name| *name == "Surface maps")
        .expect("the maps sheet")
        + 1;
    let mut relations = String::new();
    archive
        .by_name(&format!("xl/worksheets/_rels/sheet{index}.xml.rels"))
        .expect("the maps sheet's relations")
        .read_to_string(&mut relations)
        .expect("text");
    assert!(relations.contains("relationships/drawing"), "{relations}");
    let media: Vec<String> = archive
        .file_names()
        .filter_map(Result::ok)
        .filter(|name| name.starts_with("xl/media/") && name.ends_with(".png"))
        .map(|name| name.to_string())
        .collect();
    assert_eq!(media.len(), 1, "{media:?}");
    let mut png = Vec::new();
    archive
        .by_name(&media[0])
        .expect("image")
        .read_to_end(&mut png)
        .expect("bytes");
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n");
}

#[test]
fn size_answers_for_the_square_terms_of_a_composite_plan() {
    let folder = temp_folder();
    let run = trialyst(
        folder.path(),
        &[
            "size",
            "--design",
            "central-composite",
            "--factors",
            "2",
            "--centre-points",
            "5",
            "--curvature",
            "1",
            "--sd",
            "1.5",
            "--json",
        ],
    );
    run.expect_code(0);
    let answer: serde_json::Value = serde_json::from_str(run.stdout().trim()).expect("JSON");
    let first = &answer["table"][0];
    assert_eq!(first["total_runs"], 13);
    // scipy 1.17.1: each square 0.3304659142820107, the squares together 0.37432098118202606.
    assert!((first["power"].as_f64().unwrap_or(0.0) - 0.330_465_914_282_010_7).abs() < 1e-9);
    assert!((first["group_power"].as_f64().unwrap_or(0.0) - 0.374_320_981_182_026_06).abs() < 1e-9);
    assert_eq!(answer["needed"]["count"], 3);
}

/// `trialyst size` for a three-factor response-surface plan, curvature 1, SD 1,
/// with these design and axial words (an axial of "" gives no `--axial`).
fn size_three_factor(folder: &std::path::Path, design: &str, axial: &str, json: bool) -> Run {
    let mut args = vec![
        "size",
        "--design",
        design,
        "--factors",
        "3",
        "--curvature",
        "1",
        "--sd",
        "1",
    ];
    if !axial.is_empty() {
        args.extend(["--axial", axial]);
    }
    if json {
        args.push("--json");
    }
    trialyst(folder, &args)
}

#[test]
fn size_reads_the_design_and_axial_words_as_plan_does() {
    let folder = temp_folder();
    let answer = |design: &str, axial: &str| {
        let run = size_three_factor(folder.path(), design, axial, true);
        run.expect_code(0);
        serde_json::from_str::<serde_json::Value>(run.stdout().trim()).expect("JSON")
    };
    // The spellings `plan` takes give the same answer as the hyphenated words.
    let hyphenated = answer("central-composite", "faces");
    assert_eq!(answer("Central composite", "face centred"), hyphenated);
    assert_eq!(answer("central_composite", "1"), hyphenated);
    // Orthogonal blocking places the axial runs for blocks, which a size question
    // does not plan: refused naming the option, as an unknown word would be.
    let refused = size_three_factor(folder.path(), "central-composite", "orthogonal-blocks", false);
    refused.expect_code(2);
    assert!(refused.stderr().contains("--axial"), "{}", refused.report());
    assert!(refused.stderr().contains("plans no blocks"), "{}", refused.report());
    let unknown = size_three_factor(folder.path(), "simplex", "", false);
    unknown.expect_code(2);
    assert!(unknown.stderr().contains("--design 'simplex'"), "{}", unknown.report());
    let box_behnken = size_three_factor(folder.path(), "box-behnken", "faces", false);
    box_behnken.expect_code(2);
    assert!(
        box_behnken.stderr().contains("no axial runs"),
        "{}",
        box_behnken.report()
    );
}
