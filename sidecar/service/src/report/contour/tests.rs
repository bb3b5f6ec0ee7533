//! Contour maps: which factors are drawn, the picture's size and content, and the
//! picture's place in the written workbook.

use super::*;
use engine::analysis::surface::{analyse_surface, SurfaceData, SurfaceOptions};

/// A rotatable central composite plan in `k` factors (coded), with four centre runs.
fn composite(k: usize) -> Vec<Vec<f64>> {
    let alpha = (f64::from(1u32 << k)).powf(0.25);
    let mut runs = Vec::new();
    for corner in 0..1usize << k {
        runs.push(
            (0..k)
                .map(|bit| if corner >> bit & 1 == 1 { 1.0 } else { -1.0 })
                .collect(),
        );
    }
    for factor in 0..k {
        for sign in [-1.0, 1.0] {
            let mut run = vec![0.0; k];
            run[factor] = sign * alpha;
            runs.push(run);
        }
    }
    runs.extend(std::iter::repeat_n(vec![0.0; k], 4));
    runs
}

/// The invented response at coded settings `x`, run number `index`.
fn truth(x: &[f64], index: usize) -> f64 {
    let third = if x.len() > 2 {
        1.5 * x[2] - 0.8 * x[2] * x[2]
    } else {
        0.0
    };
    80.0 + 3.0 * x[0] + 2.0 * x[1] - 4.0 * x[0] * x[0] - 3.0 * x[1] * x[1]
        + 1.5 * x[0] * x[1]
        + third
        + 0.05 * (index as f64 * 1.7).sin()
}

/// The value of run `index` of the three-factor plan.
fn value_of(index: usize) -> f64 {
    truth(&composite(3)[index], index)
}

/// Invented scenario: `k` factors, the first two with a maximum near the centre, the
/// third weaker, the rest without effect; small fixed noise (a sine of the run number).
fn outcome(k: usize) -> SurfaceOutcome {
    let coded = composite(k);
    let names: Vec<String> = ["Temperature", "Time", "Pressure", "Speed", "Feed", "Depth", "Flow"][..k]
        .iter()
        .map(|name| name.to_string())
        .collect();
    let coding: Vec<(f64, f64)> = (0..k)
        .map(|index| (100.0 + 50.0 * index as f64, 10.0 + index as f64))
        .collect();
    let settings = coded
        .iter()
        .map(|run| {
            run.iter()
                .zip(&coding)
                .map(|(x, (centre, half))| centre + x * half)
                .collect()
        })
        .collect();
    let values = coded.iter().enumerate().map(|(index, x)| truth(x, index)).collect();
    let data = SurfaceData {
        factor_names: names,
        coding,
        settings,
        blocks: Vec::new(),
        values,
    };
    analyse_surface(
        &data,
        &SurfaceOptions {
            confidence: 0.95,
            direction: Some(engine::options::Direction::HigherIsBetter),
        },
    )
    .expect("fit")
}

fn decode(png_bytes: &[u8]) -> (u32, u32, Vec<u8>) {
    let decoder = png::Decoder::new(std::io::Cursor::new(png_bytes));
    let mut reader = decoder.read_info().expect("a PNG header");
    let mut buffer = vec![0; reader.output_buffer_size().expect("size")];
    let info = reader.next_frame(&mut buffer).expect("a frame");
    buffer.truncate(info.buffer_size());
    (info.width, info.height, buffer)
}

#[test]
fn the_factors_with_significant_terms_are_chosen_strongest_first() {
    let fit = outcome(5);
    let choice = important_factors(&fit, 0.05);
    // Temperature, Time and Pressure have real terms; Speed and Feed none (their terms'
    // p-values are those of noise; the noise is 0.05 against effects of 1 and more).
    assert_eq!(&choice.factors[..3], &[0, 1, 2], "{}", choice.reason);
    assert!(choice.factors.len() <= MOST_FACTORS);
    assert!(
        choice.reason.contains("Temperature, Time, Pressure"),
        "{}",
        choice.reason
    );
}

#[test]
fn the_picture_decodes_at_its_size_with_bands_lines_and_runs() {
    let fit = outcome(3);
    let held = fit.recommended.as_ref().expect("recommended").coded.clone();
    let picture = draw_pair(&fit, "Yield", Some("%"), 0, 1, &held, "the recommended settings");
    // Set TRIALYST_MAPS_OUT to a folder to keep the picture and the workbook for a look.
    if let Some(folder) = std::env::var_os("TRIALYST_MAPS_OUT") {
        std::fs::write(std::path::Path::new(&folder).join("map.png"), &picture.png).expect("kept");
    }
    let (width, height, pixels) = decode(&picture.png);
    assert_eq!(
        (width, height),
        (
            (f64::from(SHOWN.0) * RESOLUTION) as u32,
            (f64::from(SHOWN.1) * RESOLUTION) as u32
        )
    );
    assert_eq!(picture.size, SHOWN);
    assert_eq!(pixels.len(), (width * height * 3) as usize);
    // The bands: at least six colours, each filling a large area (plus the white ground).
    let mut counts: std::collections::HashMap<[u8; 3], usize> = std::collections::HashMap::new();
    for pixel in pixels.chunks(3) {
        *counts.entry([pixel[0], pixel[1], pixel[2]]).or_insert(0) += 1;
    }
    let large = counts
        .iter()
        .filter(|(colour, count)| **count > 2_000 && **colour != [255, 255, 255])
        .count();
    assert!(large >= 6, "{large} band colours");
    // Black pixels: lines, text and marks.
    let black = pixels.chunks(3).filter(|pixel| pixel.iter().all(|c| *c < 30)).count();
    assert!(black > 5_000, "{black} black pixels");
    assert!(picture.description.contains("Temperature (across) and Time (up)"));
}

/// A three-factor central composite trial (the runs and values of [`outcome`]) written
/// as a workbook and analysed through the service.
fn analysed_trial() -> crate::WorkbookResults {
    use workbook_io::write::{Book, Look, Sheet, Value};
    let folder = tempfile::tempdir().expect("a temporary folder");
    let source = folder.path().join("moulding trial.xlsx");
    let fit = outcome(3);
    let mut runs = Sheet::new("Runs");
    for (col, name) in ["Temperature (C)", "Time (s)", "Pressure (bar)", "Yield (%)"]
        .iter()
        .enumerate()
    {
        runs.put(0, col as u16, Value::text(*name), Look::ColumnHeader);
    }
    for (index, setting) in fit.run_settings().iter().enumerate() {
        let row = index as u32 + 1;
        for (col, value) in setting.iter().enumerate() {
            runs.put(row, col as u16, Value::number(*value), Look::Plain);
        }
        runs.put(row, 3, Value::number(value_of(index)), Look::Plain);
    }
    workbook_io::write::write_book(&Book { sheets: vec![runs] }, &source).expect("written");
    crate::analyse_workbook(&source, &crate::AnalysisRequest::default()).expect("analysed")
}

#[test]
fn the_maps_go_on_their_own_sheet_and_into_the_written_file() {
    use std::io::Read;
    let results = analysed_trial();
    let book = crate::report::build_results_book(&results);
    let sheet = book
        .sheets
        .iter()
        .position(|sheet| sheet.name == CONTOUR_SHEET)
        .expect("the maps sheet");
    // Three important factors: three pairs, three pictures, each on its own page and
    // below every cell of the sheet's notes.
    let maps = &book.sheets[sheet];
    assert_eq!(maps.pictures.len(), 3);
    let last_note = maps.cells.iter().map(|cell| cell.row).max().unwrap_or(0);
    for picture in &maps.pictures {
        assert!(maps.page_breaks.contains(&(picture.anchor.0 - 2)));
        let covered = picture.anchor.0..picture.anchor.0 + PICTURE_ROWS;
        assert!(
            maps.cells.iter().all(|cell| !covered.contains(&cell.row)),
            "a cell under a picture"
        );
    }
    assert!(last_note > 0);
    // The note counts the maps in words ("3 maps", "1 map") and says what each holds.
    let notes = format!("{:?}", maps.cells);
    assert!(notes.contains(": 3 maps. ") && !notes.contains("1 maps"), "{notes}");
    let started = std::time::Instant::now();
    let bytes = workbook_io::write::to_bytes(&book, std::path::Path::new("maps.results.xlsx")).expect("written");
    let elapsed = started.elapsed();
    if let Some(folder) = std::env::var_os("TRIALYST_MAPS_OUT") {
        std::fs::write(std::path::Path::new(&folder).join("maps.results.xlsx"), &bytes).expect("kept");
    }
    let mut archive = zip::ZipArchive::new(std::io::Cursor::new(bytes)).expect("a zip");
    let media: Vec<String> = archive
        .file_names()
        .filter_map(Result::ok)
        .filter(|name| name.starts_with("xl/media/") && name.ends_with(".png"))
        .map(|name| name.to_string())
        .collect();
    assert_eq!(media.len(), 3, "{media:?}");
    // The sheet's relations point at a drawing whose relations hold the images.
    let sheet_file = format!("xl/worksheets/_rels/sheet{}.xml.rels", sheet + 1);
    let mut relations = String::new();
    archive
        .by_name(&sheet_file)
        .expect("the sheet's relations")
        .read_to_string(&mut relations)
        .expect("text");
    assert!(relations.contains("relationships/drawing"), "{relations}");
    let drawing = relations
        .split("Target=\"../drawings/")
        .nth(1)
        .and_then(|rest| rest.split('"').next())
        .expect("a drawing target")
        .to_string();
    let mut drawing_relations = String::new();
    archive
        .by_name(&format!("xl/drawings/_rels/{drawing}.rels"))
        .expect("the drawing's relations")
        .read_to_string(&mut drawing_relations)
        .expect("text");
    assert_eq!(
        drawing_relations.matches("relationships/image").count(),
        3,
        "{drawing_relations}"
    );
    let mut first_png = Vec::new();
    archive
        .by_name(&media[0])
        .expect("an image")
        .read_to_end(&mut first_png)
        .expect("bytes");
    let (width, height, _) = decode(&first_png);
    assert_eq!(
        (width, height),
        (
            (f64::from(SHOWN.0) * RESOLUTION) as u32,
            (f64::from(SHOWN.1) * RESOLUTION) as u32
        )
    );
    // Writing is quick even in a debug build (the pictures are drawn before, in the book).
    assert!(elapsed.as_secs_f64() < 2.0, "{elapsed:?}");
}

/// The write cost for a seven-factor surface: at most six maps (four factors), drawn
/// and encoded in well under a second even in this test profile.
#[test]
fn seven_factors_give_at_most_six_maps_quickly() {
    let fit = outcome(7);
    let choice = important_factors(&fit, 0.05);
    assert!(choice.factors.len() <= MOST_FACTORS, "{}", choice.reason);
    let held = vec![0.0; 7];
    let started = std::time::Instant::now();
    let mut bytes = 0;
    for (at, first) in choice.factors.iter().enumerate() {
        for second in &choice.factors[at + 1..] {
            bytes += draw_pair(&fit, "Yield", None, *first, *second, &held, "the centre of the plan")
                .png
                .len();
        }
    }
    let elapsed = started.elapsed();
    assert!(
        elapsed.as_secs_f64() < 1.5,
        "{} factors, {bytes} bytes of PNG in {elapsed:?}",
        choice.factors.len()
    );
}
