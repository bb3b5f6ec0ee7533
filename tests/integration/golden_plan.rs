//! Golden plan workbooks: a plan is byte-for-byte reproducible for the same request,
//! seed and date, so `trialyst plan` with fixed options must write exactly the bytes
//! committed in `tests/golden/`. A mismatch names the first differing zip entry (the
//! part), and for an XML part the first differing position with the text around it.
//!
//! Re-bless after an intended change of the plan workbook with
//! `TRIALYST_BLESS=1 cargo test -p tests --test integration -- golden_plan::`
//! and commit the files (see DEVELOPERS.md, Testing).

use std::io::Read;

use crate::common::blessing::committed_or_bless;
use crate::common::{temp_folder, trialyst};

/// Characters of context shown on each side of a difference in an XML part.
const CONTEXT: usize = 80;

/// The entries of a zip archive in stored order: name and inflated bytes.
fn zip_parts(bytes: &[u8], what: &str) -> Vec<(String, Vec<u8>)> {
    let mut archive =
        zip::ZipArchive::new(std::io::Cursor::new(bytes)).unwrap_or_else(|error| panic!("{what}: not a zip: {error}"));
    (0..archive.len())
        .map(|index| {
            let mut entry = archive
                .by_index(index)
                .unwrap_or_else(|error| panic!("{what}: entry {index}: {error}"));
            let name = entry
                .name()
                .map(|name| name.into_owned())
                .unwrap_or_else(|error| panic!("{what}: entry {index}: {error}"));
            let mut content = Vec::new();
            entry
                .read_to_end(&mut content)
                .unwrap_or_else(|error| panic!("{what}: entry {name}: {error}"));
            (name, content)
        })
        .collect()
}

/// The first index where two byte strings differ, if they do.
fn first_differing_byte(expected: &[u8], actual: &[u8]) -> Option<usize> {
    expected
        .iter()
        .zip(actual)
        .position(|(left, right)| left != right)
        .or_else(|| (expected.len() != actual.len()).then(|| expected.len().min(actual.len())))
}

/// The text around `position` (a byte offset), on one line.
fn context_around(bytes: &[u8], position: usize) -> String {
    let start = position.saturating_sub(CONTEXT);
    let end = (position + CONTEXT).min(bytes.len());
    String::from_utf8_lossy(&bytes[start..end]).replace('\n', "\\n")
}

/// Why two workbooks differ: the first differing part (and where, for XML), or the
/// zip container itself when every part is equal; `None` when the bytes are equal.
fn explain_difference(expected: &[u8], actual: &[u8]) -> Option<String> {
    if expected == actual {
        return None;
    }
    let expected_parts = zip_parts(expected, "the golden workbook");
    let actual_parts = zip_parts(actual, "the new workbook");
    for (index, pair) in expected_parts.iter().zip(&actual_parts).enumerate() {
        let ((expected_name, expected_content), (actual_name, actual_content)) = pair;
        if expected_name != actual_name {
            return Some(format!(
                "entry {index} is `{expected_name}` in the golden workbook, `{actual_name}` in the new one"
            ));
        }
        let Some(position) = first_differing_byte(expected_content, actual_content) else {
            continue;
        };
        let is_xml = expected_name.ends_with(".xml") || expected_name.ends_with(".rels");
        if !is_xml {
            return Some(format!(
                "part `{expected_name}` differs first at byte {position} ({} bytes golden, {} new)",
                expected_content.len(),
                actual_content.len()
            ));
        }
        let line = expected_content[..position]
            .iter()
            .filter(|&&byte| byte == b'\n')
            .count()
            + 1;
        return Some(format!(
            "part `{expected_name}` differs first at byte {position} (line {line}):\n    golden: …{}…\n    new:    …{}…",
            context_around(expected_content, position),
            context_around(actual_content, position)
        ));
    }
    if expected_parts.len() != actual_parts.len() {
        let names = |parts: &[(String, Vec<u8>)]| parts.iter().map(|(name, _)| name.clone()).collect::<Vec<_>>();
        return Some(format!(
            "{} parts in the golden workbook, {} in the new one: {:?} against {:?}",
            expected_parts.len(),
            actual_parts.len(),
            names(&expected_parts),
            names(&actual_parts)
        ));
    }
    let position = first_differing_byte(expected, actual).unwrap_or(0);
    Some(format!(
        "every part is equal, but the zip container differs (entry times, compression or order of records) \
         first at byte {position} of the file"
    ))
}

/// Runs `trialyst plan` with `options` and compares the workbook with the golden file
/// `tests/golden/<name>.xlsx` (or writes it when blessing).
fn assert_plan_matches_golden(name: &str, options: &[&str]) {
    let folder = temp_folder();
    let file_name = format!("{name}.xlsx");
    let mut args = vec!["plan"];
    args.extend_from_slice(options);
    args.extend(["--out", file_name.as_str()]);
    let run = trialyst(folder.path(), &args);
    assert_eq!(run.code(), 0, "{}\n{}", run.command, run.stderr());
    let made = std::fs::read(folder.path().join(&file_name)).expect("the plan workbook was written");
    let relative = format!("tests/golden/{file_name}");
    let Some(golden) = committed_or_bless(&relative, &made) else {
        return;
    };
    if let Some(difference) = explain_difference(&golden, &made) {
        panic!(
            "`{}` no longer writes the bytes of {relative}:\n  {difference}\n\
             If the change is intended, re-bless with \
             `TRIALYST_BLESS=1 cargo test -p tests --test integration -- golden_plan::` and commit the file.",
            run.command
        );
    }
}

/// The common options: a fixed seed and date make the bytes reproducible.
const SEED_AND_DATE: [&str; 4] = ["--seed", "20260115", "--date", "2026-01-15"];

#[test]
fn half_fraction_with_centre_points_in_two_blocks_matches_golden() {
    let mut options = vec![
        "--factor",
        "Temperature=160,180",
        "--factor",
        "Pressure=2,4",
        "--factor",
        "Dwell time=30,50",
        "--factor",
        "Line speed=100,140",
        "--factor",
        "Gap=0.5,0.9",
        "--response",
        "Strength (MPa)",
        "--runs",
        "16",
        "--centre-points",
        "2",
        "--blocks",
        "2",
    ];
    options.extend(SEED_AND_DATE);
    assert_plan_matches_golden("plan-2-5-1-centre-blocks", &options);
}

#[test]
fn one_factor_plan_matches_golden() {
    let mut options = vec![
        "--factor",
        "Supplier=North,South,East",
        "--response",
        "Yield (%)",
        "--replicates",
        "3",
    ];
    options.extend(SEED_AND_DATE);
    assert_plan_matches_golden("plan-one-factor", &options);
}

/// The explanation names the part and shows the XML around the first difference
/// (two invented zips made here).
#[test]
fn difference_names_the_part_and_position() {
    let zip_of = |parts: &[(&str, &str)]| {
        let mut writer = zip::ZipWriter::new(std::io::Cursor::new(Vec::new()));
        for (name, text) in parts {
            writer
                .start_file(*name, zip::write::SimpleFileOptions::default())
                .expect("entry");
            std::io::Write::write_all(&mut writer, text.as_bytes()).expect("write");
        }
        writer.finish().expect("finish").into_inner()
    };
    let golden = zip_of(&[
        ("[Content_Types].xml", "<Types/>"),
        ("xl/worksheets/sheet1.xml", "<row r=\"1\"><c r=\"A1\"/></row>"),
    ]);
    let changed = zip_of(&[
        ("[Content_Types].xml", "<Types/>"),
        ("xl/worksheets/sheet1.xml", "<row r=\"1\"><c r=\"B1\"/></row>"),
    ]);
    let explanation = explain_difference(&golden, &changed).expect("they differ");
    assert!(
        explanation.starts_with("part `xl/worksheets/sheet1.xml` differs first at byte 17 (line 1)"),
        "{explanation}"
    );
    assert!(
        explanation.contains("golden: …<row r=\"1\"><c r=\"A1\"/></row>…"),
        "{explanation}"
    );
    assert!(
        explanation.contains("new:    …<row r=\"1\"><c r=\"B1\"/></row>…"),
        "{explanation}"
    );
    let renamed = zip_of(&[
        ("[Content_Types].xml", "<Types/>"),
        ("xl/worksheets/sheet2.xml", "<row/>"),
    ]);
    let explanation = explain_difference(&golden, &renamed).expect("they differ");
    assert!(
        explanation.contains("entry 1 is `xl/worksheets/sheet1.xml`"),
        "{explanation}"
    );
    assert_eq!(explain_difference(&golden, &golden), None);
}
