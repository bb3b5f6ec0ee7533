//! A trial whose figures lie beyond the range of the arithmetic: values near ±1.7e308 of
//! opposite sign, so that differences of means (and sums of squares) exceed the largest
//! double, about 1.8e308 (IEEE 754 binary64; common practice). No sheet, no JSON and no
//! sentence may show such a figure as "inf", "infinity" or "NaN"; a figure beyond the
//! range says so in words, and no verdict is given from it (ratios and p-values come from
//! sums divided by a power of two, which stay within the range).

// Reference values keep the 17 digits mpmath printed.
#![allow(clippy::excessive_precision)]

use service::report::build_results_book;
use service::settings::Settings;
use service::{analyse_grid, write_results, CancelFlag};
use workbook_io::write::BEYOND_RANGE;
use workbook_io::{open_workbook, CellPos, CellValue, ReadLimits, SheetGrid};

/// Invented trial: a strength reading of three recipes, three runs each, written near the
/// top of the range of doubles with opposite signs.
const TRIAL: [(&str, f64); 9] = [
    ("A", 1.70e308),
    ("A", 1.62e308),
    ("A", 1.66e308),
    ("B", -1.70e308),
    ("B", -1.61e308),
    ("B", -1.67e308),
    ("C", 1.50e308),
    ("C", -1.55e308),
    ("C", 1.52e308),
];

fn trial_grid() -> SheetGrid {
    let mut grid = SheetGrid {
        name: "Trial".into(),
        strings: vec!["Recipe".into(), "Strength".into()],
        ..SheetGrid::default()
    };
    grid.cells.push((CellPos::new(0, 0), CellValue::Text(0)));
    grid.cells.push((CellPos::new(0, 1), CellValue::Text(1)));
    for (row, (recipe, value)) in TRIAL.iter().enumerate() {
        let text = match grid.strings.iter().position(|known| known == recipe) {
            Some(index) => index,
            None => {
                grid.strings.push(recipe.to_string());
                grid.strings.len() - 1
            }
        };
        grid.cells
            .push((CellPos::new(1 + row as u32, 0), CellValue::Text(text as u32)));
        grid.cells
            .push((CellPos::new(1 + row as u32, 1), CellValue::Number(*value)));
    }
    grid
}

/// The words of `text` (lower case, split at anything but letters and digits) that name
/// an infinity or a NaN.
fn symbols_in(text: &str) -> Vec<String> {
    text.to_lowercase()
        .split(|character: char| !character.is_ascii_alphanumeric())
        .filter(|word| matches!(*word, "inf" | "infinity" | "nan" | "infinite"))
        .map(str::to_string)
        .collect()
}

#[test]
fn figures_beyond_the_range_are_said_in_words_everywhere() {
    let results = analyse_grid(
        &trial_grid(),
        &Settings::default(),
        "strength.xlsx",
        &CancelFlag::default(),
    )
    .expect("the trial is analysed");

    // The JSON document: non-finite figures are null, never a symbol.
    let json = serde_json::to_string(&results).expect("the results encode");
    assert!(symbols_in(&json).is_empty(), "JSON: {:?}", symbols_in(&json));
    // Each such null is named, by JSON Pointer, in the document's `beyond_range` list;
    // every pointer there names a null (sidecar/docs/results-format.md).
    let document: serde_json::Value = serde_json::from_str(&json).expect("the results decode");
    let listed: Vec<&str> = document["beyond_range"]
        .as_array()
        .expect("a beyond_range list")
        .iter()
        .filter_map(serde_json::Value::as_str)
        .collect();
    for pointer in &listed {
        assert_eq!(document.pointer(pointer), Some(&serde_json::Value::Null), "{pointer}");
    }
    for expected in [
        "/responses/0/one_way/anova/0/ss",
        "/responses/0/one_way/pairs/0/difference",
    ] {
        assert!(listed.contains(&expected), "{expected} is not in {listed:?}");
    }

    // The sums of squares (about 1.7e617 and 6.3e616) and the difference A - B (3.32e308)
    // are beyond the range; F, p, the pooled SD and t are not, and come from the scaled
    // sums: mpmath 1.3.0 (`beyond_range_reference.py`, 50 digits on the exact doubles)
    // F 8.1666239999999988, p 1.9390905300515427e-2, pooled SD 1.0206207261596576e+308,
    // t of A - B 3.9839999999999997. The verdict is given from that p, never from a figure
    // beyond the range.
    let response = &results.responses[0];
    let fit = response.fit().expect("the one-way fit");
    let between = fit.between();
    let agrees = |ours: f64, reference: f64| ((ours - reference) / reference).abs() < 1e-12;
    assert!(agrees(between.f.expect("F"), 8.1666239999999988), "F {:?}", between.f);
    assert!(
        agrees(between.p.expect("p"), 1.9390905300515427e-2),
        "p {:?}",
        between.p
    );
    assert!(
        agrees(fit.pooled_sd, 1.0206207261596576e+308),
        "pooled SD {}",
        fit.pooled_sd
    );
    let a_minus_b = &fit.pairs[0];
    assert!(agrees(a_minus_b.t, 3.9839999999999997), "t {}", a_minus_b.t);
    assert!(a_minus_b.difference.is_infinite() && between.ss.is_infinite());
    let verdict = response.verdict.as_ref().expect("a verdict");
    assert_eq!(verdict.conditions_differ, Some(true), "{}", verdict.headline);
    for sentence in std::iter::once(&verdict.headline).chain(&verdict.details) {
        assert!(symbols_in(sentence).is_empty(), "{sentence}");
    }

    // Every cell of every sheet, as written and read back.
    let folder = tempfile::tempdir().expect("a folder");
    let path = folder.path().join("strength results.xlsx");
    write_results(&results, &path).expect("the results workbook is written");
    let mut workbook = open_workbook(&path, &ReadLimits::default()).expect("the results workbook opens");
    let names: Vec<String> = workbook.sheets().iter().map(|info| info.name.clone()).collect();
    let book = build_results_book(&results);
    assert_eq!(names.len(), book.sheets.len(), "{names:?}");
    let mut said_in_words = 0;
    let mut cells = 0;
    for name in &names {
        let grid = workbook.read_sheet(name, None).expect("the sheet reads");
        for (position, value) in &grid.cells {
            cells += 1;
            if let CellValue::Number(number) = value {
                assert!(number.is_finite(), "{name}!{}: {number}", position.a1());
            }
            let shown = grid.display(*value);
            assert!(symbols_in(&shown).is_empty(), "{name}!{}: '{shown}'", position.a1());
            if shown.contains(BEYOND_RANGE) {
                said_in_words += 1;
            }
        }
    }
    assert!(cells > 100, "only {cells} cells were read");
    // A minus B is about 3.3e308: that difference, at least, is said in words.
    assert!(
        said_in_words > 0,
        "no figure says it is beyond the range of the arithmetic"
    );
}
