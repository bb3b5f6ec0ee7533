//! The direct xlsx reader against calamine's reader: the same grid, cell for
//! cell, for the sample workbooks, for workbooks written by rust_xlsxwriter,
//! and for hand-written sheet XML covering the format's cell forms.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::{open_workbook, sheet_xml, GridBuilder, ReadLimits, SheetGrid};
use crate::cell::{CellPos, CellValue};

/// Both readers' grids of every sheet, asserting the direct one did not decline.
fn compare_all(path: &Path) -> usize {
    let mut workbook = open_workbook(path, &ReadLimits::default()).expect("opens");
    let names: Vec<String> = workbook.sheets().iter().map(|info| info.name.clone()).collect();
    let mut cells = 0;
    for name in names {
        let mut builder = GridBuilder::new(&name, None, u64::MAX);
        let direct = sheet_xml::DirectBook::open(path, u64::MAX)
            .and_then(|mut book| sheet_xml::read_sheet(&mut book, &name, u64::MAX, &mut builder));
        assert!(
            direct.is_ok(),
            "{}: the direct reader declined sheet '{name}'",
            path.display()
        );
        let fast = workbook.read_sheet_by(&name, None, true).expect("direct read");
        let slow = workbook.read_sheet_by(&name, None, false).expect("calamine read");
        assert_same(&fast, &slow, &format!("{} / {name}", path.display()));
        cells += slow.cells.len();
    }
    cells
}

fn assert_same(fast: &SheetGrid, slow: &SheetGrid, what: &str) {
    assert_eq!(fast.cells.len(), slow.cells.len(), "{what}: cell count");
    for ((fast_pos, fast_value), (slow_pos, slow_value)) in fast.cells.iter().zip(&slow.cells) {
        assert_eq!(fast_pos, slow_pos, "{what}");
        let same = match (fast_value, slow_value) {
            (CellValue::Text(a), CellValue::Text(b)) | (CellValue::Error(a), CellValue::Error(b)) => {
                fast.text(*a) == slow.text(*b)
            }
            (CellValue::Date(a), CellValue::Date(b)) | (CellValue::Number(a), CellValue::Number(b)) => {
                a.to_bits() == b.to_bits() || (a.is_nan() && b.is_nan())
            }
            (a, b) => a == b,
        };
        assert!(
            same,
            "{what} at {}: direct {} ({fast_value:?}), calamine {} ({slow_value:?})",
            fast_pos.a1(),
            fast.display(*fast_value),
            slow.display(*slow_value)
        );
    }
    assert_eq!(fast.strings, slow.strings, "{what}: string pool");
    assert_eq!(fast.merged, slow.merged, "{what}: merged areas");
    assert_eq!(fast.hidden_rows, slow.hidden_rows, "{what}: hidden rows");
    assert_eq!(fast.hidden_cols, slow.hidden_cols, "{what}: hidden columns");
}

#[test]
fn sample_workbooks_read_the_same() {
    let folder = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../sample-workbooks");
    let mut total = 0;
    for entry in std::fs::read_dir(&folder).expect("sample folder") {
        let path = entry.expect("entry").path();
        if path.extension().is_some_and(|extension| extension == "xlsx") {
            total += compare_all(&path);
        }
    }
    assert!(total > 100, "the samples hold cells ({total})");
}

#[test]
fn written_workbooks_read_the_same() {
    let folder = tempfile::tempdir().expect("temporary folder");
    for constant_memory in [false, true] {
        let path = folder.path().join(format!("written-{constant_memory}.xlsx"));
        let mut book = rust_xlsxwriter::Workbook::new();
        let sheet = if constant_memory {
            // Constant-memory mode writes inline strings instead of shared ones.
            book.add_worksheet_with_constant_memory()
                .expect("constant-memory sheet")
        } else {
            book.add_worksheet()
        };

        let formats = [
            rust_xlsxwriter::Format::new().set_num_format("yyyy-mm-dd"),
            rust_xlsxwriter::Format::new().set_num_format("hh:mm:ss"),
            rust_xlsxwriter::Format::new().set_num_format("[h]:mm"),
            rust_xlsxwriter::Format::new().set_num_format("0.00"),
            rust_xlsxwriter::Format::new().set_num_format("#,##0 \"days\""),
            rust_xlsxwriter::Format::new().set_num_format_index(14),
            rust_xlsxwriter::Format::new().set_bold(),
        ];
        sheet.write_string(0, 0, "Label & <kind>").expect("write");
        sheet.write_string(0, 1, "  padded  ").expect("write");
        sheet.write_string(0, 2, "line one\nline two").expect("write");
        sheet.write_string(0, 3, "").expect("write");
        for row in 1..40u32 {
            sheet
                .write_string(row, 0, format!("condition {}", row % 4))
                .expect("write");
            sheet.write_number(row, 1, row as f64 * 1.25 - 7.0).expect("write");
            sheet.write_boolean(row, 2, row % 3 == 0).expect("write");
            let format = &formats[row as usize % formats.len()];
            sheet
                .write_number_with_format(row, 3 + (row % 5) as u16 * 3, 45_000.5 + row as f64, format)
                .expect("write");
            if row % 7 == 0 {
                sheet
                    .write_formula(row, 5, "=\"a\"&\"b\"")
                    .expect("write")
                    .set_formula_result(row, 5, "ab & more");
            }
        }
        sheet.write_number(1_000, 200, 1e-300).expect("write");
        sheet.write_string(1_048_575, 16_383, "far corner").expect("write");
        if !constant_memory {
            sheet
                .merge_range(50, 0, 51, 2, "merged", &rust_xlsxwriter::Format::new())
                .expect("merge");
        }
        book.save(&path).expect("save");
        compare_all(&path);
    }
}

/// Writes a workbook whose sheet XML, shared strings and styles are given as text.
fn handmade(path: &Path, sheet_xml: &str, shared: &str, styles: &str) {
    let file = std::fs::File::create(path).expect("create");
    let mut zip = zip::ZipWriter::new(file);
    let options = zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Deflated);
    let mut part = |name: &str, text: &str| {
        zip.start_file(name, options).expect("part");
        zip.write_all(text.as_bytes()).expect("write part");
    };
    part(
        "[Content_Types].xml",
        r#"<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/><Override PartName="/xl/sharedStrings.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sharedStrings+xml"/><Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/></Types>"#,
    );
    part(
        "_rels/.rels",
        r#"<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>"#,
    );
    part(
        "xl/workbook.xml",
        r#"<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="Data" sheetId="1" r:id="rId1"/></sheets></workbook>"#,
    );
    part(
        "xl/_rels/workbook.xml.rels",
        r#"<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/><Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/sharedStrings" Target="sharedStrings.xml"/><Relationship Id="rId3" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/></Relationships>"#,
    );
    part("xl/worksheets/sheet1.xml", sheet_xml);
    part("xl/sharedStrings.xml", shared);
    part("xl/styles.xml", styles);
    zip.finish().expect("finish");
}

const STYLES: &str = r#"<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><numFmts count="3"><numFmt numFmtId="164" formatCode="yyyy\-mm\-dd"/><numFmt numFmtId="165" formatCode="&quot;ok&quot; 0.0"/><numFmt numFmtId="166" formatCode="[&gt;=100]0;[Red]0.00"/></numFmts><fonts count="1"><font><sz val="11"/></font></fonts><fills count="1"><fill><patternFill patternType="none"/></fill></fills><borders count="1"><border/></borders><cellStyleXfs count="1"><xf numFmtId="14"/></cellStyleXfs><cellXfs count="6"><xf numFmtId="0"/><xf numFmtId="164" applyNumberFormat="1"/><xf numFmtId="165"><alignment horizontal="left"/></xf><xf numFmtId="22"/><xf numFmtId="166"/><xf numFmtId="46"/></cellXfs><extLst><ext uri="{1}" xmlns:x14="urn:x14"><x14:slicerStyles defaultSlicerStyle="S"/></ext></extLst></styleSheet>"#;

const SHARED: &str = r#"<?xml version="1.0" encoding="UTF-8"?><sst xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" count="6" uniqueCount="6"><si><t>plain</t></si><si><t xml:space="preserve">  kept  </t></si><si><t>  trimmed
</t></si><si><r><rPr><b/></rPr><t>rich </t></r><r><t xml:space="preserve">text &amp; more</t></r><rPh sb="0" eb="1"><t>phonetic</t></rPh></si><si/><si><t>&#x41;&#66;&lt;&gt;&quot;&apos;</t></si><si><t><![CDATA[<raw>]]></t></si><si><t>line&#13;
end</t></si></sst>"#;

#[test]
fn handmade_cell_forms_read_the_same() {
    let sheet = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><dimension ref="A1:H9"/><sheetViews><sheetView workbookViewId="0"/></sheetViews><cols><col min="2" max="3" width="9" hidden="1"/><col min="5" max="5" width="9" hidden="0"/></cols><sheetData>
<row r="1"><c r="A1" t="s"><v>0</v></c><c r="B1" t="s"><v>1</v></c><c r="C1" t="s"><v>2</v></c><c r="D1" t="s"><v>3</v></c><c r="E1" t="s"><v>4</v></c><c r="F1" t="s"><v>5</v></c><c r="G1" t="s"><v>6</v></c><c r="H1" t="s"><v>7</v></c></row>
<row r="2"><c t="n"><v>1.5</v></c><c><v>-2E3</v></c><c s="1"><v>45000</v></c><c s="2"><v>3</v></c><c s="3"><v>45000.25</v></c><c s="4"><v>7</v></c><c s="5"><v>1.5</v></c><c s="9"><v>8</v></c></row>
<row><c r="B3" t="b"><v>1</v></c><c t="b"><v>0</v></c><c t="e"><v>#N/A</v></c><c t="e"><v>#DIV/0!</v></c><c t="d"><v>2024-05-01T10:00:00</v></c><c t="str"><f>A1&amp;"x"</f><v>formula &amp; text</v></c></row>
<row r="5" spans="1:8"><c r="A5" t="inlineStr"><is><t>inline</t></is></c><c r="B5" t="inlineStr"><is><r><t>in</t></r><r><t xml:space="preserve"> runs</t></r></is></c><c r="C5"/><c r="D5" s="1"/><c r="E5"><v></v></c><c r="F5"><v>not a number</v></c><c r="G5"><f>1+1</f><v>2</v></c><c r="H5" t="s"><v></v></c></row>
<row r="6" hidden="1"/>
<row><c><v>10</v></c><!-- a comment <c r="Z1"><v>9</v></c> --><c><v>11</v></c></row>
<row r="9"><c r="H9"><v>   </v></c><c r="A9"><v>1</v></c></row>
<x:row r="12" xmlns:x="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><x:c r="C12" t="s"><x:v>0</x:v></x:c></x:row>
</sheetData><mergeCells count="2"><mergeCell ref="A5:B5"/><mergeCell ref="C9:D10"/></mergeCells><extLst><ext uri="{2}" xmlns:x14="urn:x14"><x14:dataValidations count="0"/></ext></extLst></worksheet>"#;
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("handmade.xlsx");
    handmade(&path, sheet, SHARED, STYLES);
    let cells = compare_all(&path);
    assert!(cells >= 30, "{cells} cells");
    // A spot check of what both readers agree on.
    let mut workbook = open_workbook(&path, &ReadLimits::default()).expect("opens");
    let grid = workbook.read_sheet("Data", None).expect("reads");
    let at = |a1: &str| grid.get(crate::cell::parse_a1(a1).expect("a1"));
    assert_eq!(at("C2"), Some(CellValue::Date(45_000.0)));
    assert_eq!(at("D2"), Some(CellValue::Number(3.0)));
    assert_eq!(at("A7"), Some(CellValue::Number(10.0)));
    assert_eq!(at("B7"), Some(CellValue::Number(11.0)));
    assert_eq!(grid.merged.len(), 2);
    assert_eq!(grid.hidden_rows, [5]);
    assert_eq!(grid.hidden_cols, [1, 2]);
}

#[test]
fn unusual_forms_fall_back_to_calamine() {
    let folder = tempfile::tempdir().expect("temporary folder");
    let cases = [
        // An escape of the format's own kind, left to calamine.
        r#"<row r="1"><c r="A1" t="str"><v>a_x0041_b</v></c></row>"#,
        // A malformed reference.
        r#"<row r="1"><c r="1A"><v>1</v></c></row>"#,
    ];
    for (index, cells) in cases.iter().enumerate() {
        let sheet = format!(
            r#"<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>{cells}</sheetData></worksheet>"#
        );
        let path = folder.path().join(format!("unusual-{index}.xlsx"));
        handmade(&path, &sheet, SHARED, STYLES);
        let mut builder = GridBuilder::new("Data", None, u64::MAX);
        assert!(
            matches!(
                sheet_xml::DirectBook::open(&path, u64::MAX).and_then(|mut book| sheet_xml::read_sheet(
                    &mut book,
                    "Data",
                    u64::MAX,
                    &mut builder
                )),
                Err(sheet_xml::Stop::Decline)
            ),
            "case {index} declines"
        );
        let mut workbook = open_workbook(&path, &ReadLimits::default()).expect("opens");
        let fast = workbook.read_sheet_by("Data", None, true);
        let slow = workbook.read_sheet_by("Data", None, false);
        match (fast, slow) {
            (Ok(fast), Ok(slow)) => assert_same(&fast, &slow, &format!("case {index}")),
            (Err(fast), Err(slow)) => assert_eq!(fast.to_string(), slow.to_string()),
            (fast, slow) => panic!("case {index}: {fast:?} against {slow:?}"),
        }
    }
}

#[test]
fn cell_cap_and_window_hold_on_the_direct_path() {
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("cap.xlsx");
    let mut book = rust_xlsxwriter::Workbook::new();
    let sheet = book.add_worksheet();
    for row in 0..50u32 {
        for col in 0..4u16 {
            sheet
                .write_number(row, col, (row * 4 + col as u32) as f64)
                .expect("write");
        }
    }
    book.save(&path).expect("save");
    let limits = ReadLimits {
        max_cells: 120,
        ..ReadLimits::default()
    };
    let mut workbook = open_workbook(&path, &limits).expect("opens");
    let error = workbook.read_sheet("Sheet1", None).expect_err("too many cells");
    assert!(
        matches!(error, super::ReadError::TooManyCells { limit: 120, .. }),
        "{error}"
    );
    let window = crate::cell::parse_a1_range("B3:C5");
    let fast = workbook.read_sheet_by("Sheet1", window, true).expect("window");
    let slow = workbook.read_sheet_by("Sheet1", window, false).expect("window");
    assert_same(&fast, &slow, "window");
    assert_eq!(fast.cells.len(), 6);
}

#[test]
fn summary_formulas_are_noted_with_their_function() {
    // Formula text as the sheet format stores it (no leading '='; newer functions with
    // the `_xlfn.` prefix; shared formulas written once with `si` and referred to after).
    let sheet = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>
<row r="1"><c r="A1"><v>1</v></c><c r="B1"><v>4</v></c><c r="C1"><f>ROUND(_xlfn.STDEV.S(A1:A3),2)</f><v>1</v></c></row>
<row r="2"><c r="A2"><v>2</v></c><c r="B2"><v>5</v></c><c r="C2"><f>A2*2</f><v>4</v></c></row>
<row r="3"><c r="A3"><v>3</v></c><c r="B3"><v>6</v></c><c r="C3"><f>IF(A3&lt;2,SUM(A1:A2),0)</f><v>0</v></c></row>
<row r="4"><c r="A4"><f t="shared" ref="A4:B4" si="0">AVERAGE(A1:A3)</f><v>2</v></c><c r="B4"><f t="shared" si="0"/><v>5</v></c><c r="C4"><f></f><v>7</v></c></row>
</sheetData></worksheet>"#;
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("formulas.xlsx");
    handmade(&path, sheet, SHARED, STYLES);
    compare_all(&path);
    let mut workbook = open_workbook(&path, &ReadLimits::default()).expect("opens");
    let grid = workbook.read_sheet("Data", None).expect("reads");
    let noted: Vec<(String, &str)> = grid
        .summary_formulas
        .iter()
        .map(|(pos, function)| (pos.a1(), *function))
        .collect();
    assert_eq!(
        noted,
        [
            ("C1".to_string(), "STDEV.S"),
            ("A4".to_string(), "AVERAGE"),
            ("B4".to_string(), "AVERAGE")
        ]
    );
    // The cached values are read as before.
    assert_eq!(
        grid.get(crate::cell::parse_a1("B4").expect("a1")),
        Some(CellValue::Number(5.0))
    );
}

#[test]
fn summary_functions_are_told_from_record_formulas() {
    use super::summary_function;
    assert_eq!(summary_function(b"AVERAGE(B2:B9)"), Some("AVERAGE"));
    assert_eq!(summary_function(b"=average(B2:B9)"), Some("AVERAGE"));
    assert_eq!(summary_function(b" SUBTOTAL(9,B2:B9)"), Some("SUBTOTAL"));
    assert_eq!(summary_function(b"_xlfn.STDEV.S(B2:B9)"), Some("STDEV.S"));
    assert_eq!(
        summary_function(b"IFERROR(ROUND(MEDIAN(B2:B9),1),\"\")"),
        Some("MEDIAN")
    );
    assert_eq!(summary_function(b"B2/C2"), None);
    assert_eq!(summary_function(b"ROUND(B2*1.8+32,1)"), None);
    assert_eq!(summary_function(b"SUMPRODUCT(B2:B9,C2:C9)"), None);
    assert_eq!(summary_function(b""), None);
}

#[test]
fn cells_that_do_not_fit_their_type_are_unreadable_cells_at_their_address() {
    let folder = tempfile::tempdir().expect("temporary folder");
    let cells = [
        (r#"<c r="B2" t="n"><v>12,5</v></c>"#, "a number cell holding \"12,5\""),
        (
            r#"<c r="B3" t="zz"><v>7</v></c>"#,
            "a type this reader does not know, holding \"7\"",
        ),
        (r#"<c r="B4" t="s"><v>99</v></c>"#, "entry \"99\" of a table of"),
        (
            r#"<c r="B5" t="b"><v>maybe</v></c>"#,
            "a TRUE/FALSE cell holding \"maybe\"",
        ),
        (r#"<c r="B6" t="e"><v>oops</v></c>"#, "an error cell holding \"oops\""),
        (r#"<c r="B7"><v>3.5</v></c>"#, ""),
    ];
    let rows: String = cells
        .iter()
        .enumerate()
        .map(|(index, (cell, _))| format!(r#"<row r="{}">{cell}</row>"#, index + 2))
        .collect();
    let sheet = format!(
        r#"<?xml version="1.0"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>{rows}</sheetData></worksheet>"#
    );
    let path = folder.path().join("odd-cells.xlsx");
    handmade(&path, &sheet, SHARED, STYLES);
    let mut workbook = open_workbook(&path, &ReadLimits::default()).expect("opens");
    let grid = workbook.read_sheet("Data", None).expect("read, not refused");
    for (index, (_, described)) in cells.iter().enumerate() {
        let position = CellPos::new(index as u32 + 1, 1);
        match grid.get(position) {
            Some(CellValue::Error(text)) => assert!(
                !described.is_empty() && grid.text(text).contains(described) && !grid.text(text).starts_with('#'),
                "{}: {}",
                position.a1(),
                grid.text(text)
            ),
            Some(CellValue::Number(number)) => assert!(described.is_empty() && number == 3.5),
            other => panic!("{}: {other:?}", position.a1()),
        }
    }
}
