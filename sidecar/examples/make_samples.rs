//! Regenerates the demo workbooks in `sample-workbooks/`.
//!
//! Every scenario here is invented for the demo: the plants, products,
//! suppliers and numbers are made up, drawn from a fixed-seed generator so
//! the files come out the same each time.
//!
//! Run: `cargo run -p sidecar --example make_samples -- sample-workbooks`

// Benchmarks and examples report on the terminal.
#![allow(clippy::print_stdout, clippy::print_stderr, clippy::exit)]

use std::path::{Path, PathBuf};

use rust_xlsxwriter::{ExcelDateTime, Format, Workbook, XlsxError};

/// A small deterministic generator (SplitMix64) with normal deviates by Box-Muller.
struct Draws(u64);

impl Draws {
    fn next_unit(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^= z >> 31;
        ((z >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }

    fn normal(&mut self, mean: f64, sd: f64) -> f64 {
        let u1 = self.next_unit();
        let u2 = self.next_unit();
        mean + sd * (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

fn round_to(value: f64, places: i32) -> f64 {
    let scale = 10f64.powi(places);
    (value * scale).round() / scale
}

/// Wide layout: four cure profiles for a powder coating, pull-off adhesion in MPa.
fn coating_cure(path: &Path) -> Result<(), XlsxError> {
    let mut workbook = Workbook::new();
    let bold = Format::new().set_bold();
    let sheet = workbook.add_worksheet().set_name("Adhesion")?;
    let profiles = [
        ("Profile 1 (160 C, 20 min)", 6.1, 10),
        ("Profile 2 (180 C, 12 min)", 6.9, 12),
        ("Profile 3 (200 C, 8 min)", 7.2, 9),
        ("Profile 4 (180 C, 20 min)", 6.8, 11),
    ];
    let mut draws = Draws(48_2026);
    for (col, (name, mean, count)) in profiles.iter().enumerate() {
        sheet.write_string_with_format(0, col as u16, *name, &bold)?;
        sheet.set_column_width(col as u16, 24)?;
        for row in 0..*count {
            sheet.write_number(row + 1, col as u16, round_to(draws.normal(*mean, 0.45), 2))?;
        }
    }
    let settings = workbook.add_worksheet().set_name("trialyst settings")?;
    settings.write_string(0, 0, "value name")?;
    settings.write_string(0, 1, "Pull-off adhesion (MPa)")?;
    settings.write_string(1, 0, "direction")?;
    settings.write_string(1, 1, "higher")?;
    workbook.save(path)
}

/// Long layout, two responses: three mould tools, shrinkage and part weight.
fn moulding(path: &Path) -> Result<(), XlsxError> {
    let mut workbook = Workbook::new();
    let bold = Format::new().set_bold();
    let sheet = workbook.add_worksheet().set_name("Week 48 runs")?;
    sheet.write_string(0, 0, "Bracket moulding trial, line 3 (invented demo data)")?;
    let headers = ["Shot", "Mould tool", "Shrinkage (%)", "Part weight (g)"];
    for (col, header) in headers.iter().enumerate() {
        sheet.write_string_with_format(2, col as u16, *header, &bold)?;
        sheet.set_column_width(col as u16, 16)?;
    }
    let tools = [
        ("Tool K-1", 1.42, 18.35),
        ("Tool K-2", 1.38, 18.41),
        ("Tool M-7", 1.55, 18.22),
    ];
    let mut draws = Draws(7_331);
    for shot in 0..36u32 {
        let row = shot + 3;
        let (tool, shrink, weight) = tools[shot as usize % 3];
        sheet.write_number(row, 0, (shot + 1) as f64)?;
        sheet.write_string(row, 1, tool)?;
        sheet.write_number(row, 2, round_to(draws.normal(shrink, 0.05), 3))?;
        sheet.write_number(row, 3, round_to(draws.normal(weight, 0.08), 2))?;
    }
    // The settings sheet tells the analysis what to compare.
    let settings = workbook.add_worksheet().set_name("trialyst settings")?;
    settings.write_string_with_format(0, 0, "setting", &bold)?;
    settings.write_string_with_format(0, 1, "value", &bold)?;
    settings.write_string(1, 0, "confidence")?;
    settings.write_string(1, 1, "95%")?;
    settings.write_string(2, 0, "contrast")?;
    settings.write_string(2, 1, "K tools vs M-7: ([Tool K-1] + [Tool K-2])/2 - [Tool M-7]")?;
    settings.write_string(3, 0, "direction")?;
    settings.write_string(3, 1, "lower")?;
    settings.set_column_width(0, 14)?;
    settings.set_column_width(1, 60)?;
    workbook.save(path)
}

/// Long layout with deliberately bad cells: resin lots from three suppliers, tensile strength.
fn resin_with_problems(path: &Path) -> Result<(), XlsxError> {
    let mut workbook = Workbook::new();
    let bold = Format::new().set_bold();
    let date_format = Format::new().set_num_format("yyyy-mm-dd");
    let sheet = workbook.add_worksheet().set_name("Tensile")?;
    let headers = [
        "Resin supplier",
        "Tensile strength (MPa)",
        "Tensile strength (MPa)",
        "Operator note",
    ];
    for (col, header) in headers.iter().enumerate() {
        sheet.write_string_with_format(0, col as u16, *header, &bold)?;
        sheet.set_column_width(col as u16, 24)?;
    }
    let suppliers = [
        ("Northfield Polymers", 52.0),
        ("Ashgrove Resins", 54.5),
        ("=Coastal Chem", 51.2),
    ];
    let mut draws = Draws(99_017);
    let mut row = 1u32;
    for index in 0..30 {
        let (supplier, mean) = suppliers[index % 3];
        sheet.write_string(row, 0, supplier)?;
        sheet.write_number(row, 1, round_to(draws.normal(mean, 1.6), 1))?;
        sheet.write_number(row, 2, round_to(draws.normal(mean, 1.6), 1))?;
        row += 1;
    }
    // The problems a real sheet collects.
    sheet.write_string(row, 0, "Northfield Polymers")?;
    sheet.write_string(row, 1, "n/a")?;
    sheet.write_string(row, 3, "specimen slipped in grips")?;
    row += 1;
    sheet.write_string(row, 0, "Ashgrove Resins")?;
    sheet.write_formula(row, 1, rust_xlsxwriter::Formula::new("=NA()").set_result("#N/A"))?;
    row += 1;
    sheet.write_number(row, 1, 53.3)?;
    sheet.write_string(row, 3, "label missing on the sample bag")?;
    row += 1;
    sheet.write_string(row, 0, "Ashgrove Resins")?;
    let date = ExcelDateTime::from_ymd(2026, 11, 23)?;
    sheet.write_datetime_with_format(row, 1, &date, &date_format)?;
    row += 1;
    sheet.write_string(row, 0, "ashgrove resins ")?;
    sheet.write_number(row, 1, 55.1)?;
    row += 1;
    sheet.write_string(row, 0, "Single-lot Trial")?;
    sheet.write_number(row, 1, 50.2)?;
    sheet.write_boolean(row, 2, true)?;
    workbook.save(path)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let folder = std::env::args()
        .nth(1)
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from("sample-workbooks"));
    std::fs::create_dir_all(&folder)?;
    coating_cure(&folder.join("coating-cure-profiles.xlsx"))?;
    moulding(&folder.join("bracket-moulding-week-48.xlsx"))?;
    resin_with_problems(&folder.join("resin-supplier-tensile.xlsx"))?;
    println!("wrote 3 demo workbooks to {}", folder.display());
    Ok(())
}
