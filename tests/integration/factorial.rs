//! Factorial trials end to end: workbooks written here, read through the service, and
//! the factorial outcome checked against published examples and statsmodels; the built
//! binary run on a factorial workbook and its results read back with calamine.

use std::path::Path;

use calamine::{open_workbook_auto, Data, Reader};
use engine::analysis::factorial::FactorialOutcome;
use service::settings::Settings;
use service::{analyse_workbook, AnalysisRequest};

/// A cell of a test workbook.
#[derive(Clone)]
enum Cell {
    Text(String),
    Number(f64),
}

fn text(value: &str) -> Cell {
    Cell::Text(value.to_string())
}

/// Writes a workbook with a sheet `Trial` (headers, then rows) and, when `settings` is
/// not empty, a settings sheet of key/value rows.
fn write_workbook(path: &Path, headers: &[&str], rows: &[Vec<Cell>], settings: &[(&str, &str)]) {
    let mut workbook = rust_xlsxwriter::Workbook::new();
    let sheet = workbook.add_worksheet();
    sheet.set_name("Trial").expect("sheet name");
    for (col, header) in headers.iter().enumerate() {
        sheet.write_string(0, col as u16, *header).expect("header");
    }
    for (row, cells) in rows.iter().enumerate() {
        for (col, cell) in cells.iter().enumerate() {
            let (row, col) = (row as u32 + 1, col as u16);
            match cell {
                Cell::Text(value) => sheet.write_string(row, col, value.as_str()).expect("text"),
                Cell::Number(value) => sheet.write_number(row, col, *value).expect("number"),
            };
        }
    }
    if !settings.is_empty() {
        let sheet = workbook.add_worksheet();
        sheet.set_name("trialyst settings").expect("settings name");
        for (row, (key, value)) in settings.iter().enumerate() {
            sheet.write_string(row as u32, 0, *key).expect("key");
            sheet.write_string(row as u32, 1, *value).expect("value");
        }
    }
    workbook.save(path).expect("save workbook");
}

fn analyse(path: &Path, settings: Settings) -> FactorialOutcome {
    let request = AnalysisRequest {
        settings,
        ..AnalysisRequest::default()
    };
    let results = analyse_workbook(path, &request).expect("analysed");
    results.responses[0].factorial.clone().expect("a factorial outcome")
}

fn close(actual: f64, expected: f64, relative: f64) -> bool {
    (actual - expected).abs() <= relative * (1.0 + expected.abs())
}

/// NIST/SEMATECH e-Handbook of Statistical Methods, section 5.5.9 (eddy current probe
/// sensitivity, 2^3 full factorial): responses in standard order of X1, X2, X3, from
/// memory (the same values as the two-level unit tests).
const EDDY_RESPONSES: [f64; 8] = [1.70, 4.57, 0.55, 3.39, 1.51, 4.59, 0.67, 4.29];

#[test]
fn nist_eddy_current_effects_from_a_workbook() {
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join("eddy.xlsx");
    // Recorded in a shuffled order: the analysis must put the runs in standard order.
    let recorded = [5usize, 2, 7, 0, 3, 6, 1, 4];
    let rows: Vec<Vec<Cell>> = recorded
        .iter()
        .map(|&run| {
            let level = |bit: usize| Cell::Number(if run & (1 << bit) != 0 { 1.0 } else { -1.0 });
            vec![level(0), level(1), level(2), Cell::Number(EDDY_RESPONSES[run])]
        })
        .collect();
    write_workbook(
        &path,
        &["X1", "X2", "X3", "Sensitivity"],
        &rows,
        // Higher sensitivity is better (the case study's aim); without a direction no
        // best settings are chosen.
        &[("factor", "X1, X2, X3"), ("direction", "higher")],
    );
    let outcome = analyse(&path, Settings::default());
    let two = outcome.two_level.as_ref().expect("two-level analysis");
    assert_eq!(two.design.kind, "full factorial");
    assert_eq!(two.design.name, "2^3 full factorial");
    // NIST e-Handbook 5.5.9 effect estimates (from memory): mean 2.65875; X1 3.1025,
    // X2 -0.8675, X1*X2 0.1275, X3 0.2125, X1*X3 0.2475, X2*X3 0.2975, X1*X2*X3 0.1425.
    assert!(close(two.grand_mean.expect("mean"), 2.65875, 1e-12));
    let expected = [
        ("A", "X1", 3.1025),
        ("B", "X2", -0.8675),
        ("AB", "X1:X2", 0.1275),
        ("C", "X3", 0.2125),
        ("AC", "X1:X3", 0.2475),
        ("BC", "X2:X3", 0.2975),
        ("ABC", "X1:X2:X3", 0.1425),
    ];
    assert_eq!(two.effects.len(), expected.len());
    for (effect, (name, term, value)) in two.effects.iter().zip(expected) {
        assert_eq!(effect.name, name);
        assert_eq!(effect.term, term);
        assert!(close(effect.effect, value, 1e-12), "{name}: {}", effect.effect);
    }
    // Standard order (1), a, b, ab, ... as record numbers: run r was recorded at the
    // position of r in `recorded`.
    let positions: Vec<usize> = (0..8)
        .map(|run| recorded.iter().position(|&r| r == run).expect("present"))
        .collect();
    assert_eq!(two.standard_order, positions);
    // Lenth (1989) on these seven effects: PSE 0.345 (hand arithmetic, see the
    // two-level unit tests); scipy 1.17.1 t.ppf(0.975, 7/3) = 3.764123072082586.
    let lenth = two.lenth.as_ref().expect("Lenth");
    assert!(close(lenth.pse, 0.345, 1e-12));
    assert!(close(lenth.margin_of_error, 0.345 * 3.764123072082586, 1e-9));
    let active: Vec<&str> = two
        .effects
        .iter()
        .filter(|e| e.active)
        .map(|e| e.name.as_str())
        .collect();
    assert_eq!(active, ["A"]);
    // Coding: the lower number is -1.
    let coding = outcome.factors[0].coding.as_ref().expect("coded");
    assert_eq!((coding.low.as_str(), coding.high.as_str()), ("-1", "1"));
    // Reduced model: X1 alone; predicted best (higher is better) = mean + 3.1025 / 2.
    let reduced = outcome.reduced.as_ref().expect("reduced model");
    assert_eq!(reduced.terms, ["X1"]);
    let best = reduced.best.as_ref().expect("best settings");
    assert_eq!(best.settings, [("X1".to_string(), "1".to_string())]);
    assert!(close(best.mean, 2.65875 + 3.1025 / 2.0, 1e-12));
    assert!(outcome.summary[0].contains("X1"), "{:?}", outcome.summary);
}

/// Montgomery, *Design and Analysis of Experiments* (pilot-plant filtration rate, an
/// unreplicated 2^4, example 6.2 in the 5th and later editions): rates in standard order
/// of A (temperature), B (pressure), C (formaldehyde concentration), D (stirring rate),
/// from memory; the published effects (A 21.625, C 9.875, D 14.625, AC -18.125,
/// AD 16.625, the others small) were recomputed from these rates with numpy 2.4.6.
const FILTRATION: [f64; 16] = [
    45.0, 71.0, 48.0, 65.0, 68.0, 60.0, 80.0, 65.0, 43.0, 100.0, 45.0, 104.0, 75.0, 86.0, 70.0, 96.0,
];

#[test]
fn filtration_rate_lenth_screening_and_reduced_model() {
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join("filtration.xlsx");
    // C is recorded as text "low" / "high": sorted, "high" comes first and is coded -1,
    // so C's effect comes out with its sign reversed (the documented rule).
    let rows: Vec<Vec<Cell>> = (0..16)
        .rev()
        .map(|run: usize| {
            let on = |bit: usize| run & (1 << bit) != 0;
            vec![
                Cell::Number(if on(0) { 35.0 } else { 24.0 }),
                Cell::Number(if on(1) { 15.0 } else { 10.0 }),
                text(if on(2) { "high" } else { "low" }),
                Cell::Number(if on(3) { 30.0 } else { 15.0 }),
                Cell::Number(FILTRATION[run]),
            ]
        })
        .collect();
    write_workbook(
        &path,
        &[
            "Temperature",
            "Pressure",
            "Concentration",
            "Stirring",
            "Filtration rate",
        ],
        &rows,
        &[
            ("factor", "Temperature, Pressure, Concentration, Stirring"),
            ("direction", "higher"),
        ],
    );
    let outcome = analyse(&path, Settings::default());
    let two = outcome.two_level.as_ref().expect("two-level");
    let effect = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name).effect;
    assert!(close(effect("A"), 21.625, 1e-12));
    assert!(close(effect("C"), -9.875, 1e-12));
    assert!(close(effect("D"), 14.625, 1e-12));
    assert!(close(effect("AC"), 18.125, 1e-12));
    assert!(close(effect("AD"), 16.625, 1e-12));
    // Lenth's method by hand: median |c| 2.625, s0 3.9375, trimmed median 1.75, PSE
    // 2.625; scipy 1.17.1 t.ppf(0.975, 5) = 2.5705818356363146, ME 6.747777318545326.
    let lenth = two.lenth.as_ref().expect("Lenth");
    assert!(close(lenth.pse, 2.625, 1e-12));
    assert!(close(lenth.margin_of_error, 6.747777318545326, 1e-9));
    let mut active: Vec<&str> = two
        .effects
        .iter()
        .filter(|e| e.active)
        .map(|e| e.name.as_str())
        .collect();
    active.sort();
    assert_eq!(active, ["A", "AC", "AD", "C", "D"]);
    // Reduced model A, C, D, AC, AD: the best corner is temperature high, concentration
    // low, stirring high; by hand from the effects, 70.0625 + (21.625 + 9.875 + 14.625
    // + 18.125 + 16.625) / 2 = 70.0625 + 30.5625 = 100.625.
    let reduced = outcome.reduced.as_ref().expect("reduced");
    assert_eq!(reduced.residual_df, 10);
    let best = reduced.best.as_ref().expect("best");
    let chosen: Vec<(&str, &str)> = best.settings.iter().map(|(f, l)| (f.as_str(), l.as_str())).collect();
    assert_eq!(
        chosen,
        [("Temperature", "35"), ("Concentration", "low"), ("Stirring", "30")]
    );
    assert!(close(best.mean, 100.625, 1e-12));
    assert!(best.was_run);
    let (low, high) = best.mean_interval.expect("interval");
    assert!(low < 100.625 && high > 100.625);
    let check = reduced.residual_check.as_ref().expect("residual check");
    assert_eq!(check.n_residuals, 16);
    assert!(check.shapiro_wilk.is_some());
    // The k-way model of an unreplicated 2^4 pools the four-factor interaction.
    let model = outcome.model.as_ref().expect("k-way model");
    assert_eq!(model.interaction_order, 3);
    assert_eq!(model.residual_df, 1);
    assert!(model.types_coincide);
}

fn row_of<'a>(
    lines: &'a [engine::analysis::factorial::AnovaLine],
    source: &str,
) -> &'a engine::analysis::factorial::AnovaLine {
    lines.iter().find(|line| line.source == source).expect(source)
}

#[test]
fn unbalanced_two_factor_type_ii_and_iii_match_statsmodels() {
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join("two.xlsx");
    let supplier = [
        vec!["North"; 4],
        vec!["South"; 3],
        vec!["West"; 5],
        vec!["North"; 2],
        vec!["South"; 4],
        vec!["West"; 3],
    ]
    .concat();
    let oven = [vec!["old"; 12], vec!["new"; 9]].concat();
    let strength = [
        41.2, 43.5, 40.8, 42.9, 45.1, 46.3, 44.0, 39.5, 38.2, 40.1, 41.0, 39.9, 44.8, 46.0, 47.9, 49.2, 48.1, 46.7,
        42.2, 43.6, 41.9,
    ];
    let rows: Vec<Vec<Cell>> = (0..21)
        .map(|i| vec![text(supplier[i]), text(oven[i]), Cell::Number(strength[i])])
        .collect();
    write_workbook(&path, &["Supplier", "Oven", "Strength"], &rows, &[]);
    let outcome = analyse(&path, Settings::default());
    let model = outcome.model.as_ref().expect("model");
    assert!(!model.types_coincide);
    // statsmodels 0.15.0: anova_lm(ols('Strength ~ C(Supplier, Sum)*C(Oven, Sum)').fit(), typ=2 / typ=3)
    let type_ii = [
        ("Supplier", 104.87819528416026, 4.51094671148966e-07),
        ("Oven", 43.13283814130386, 2.061096358103027e-05),
        ("Supplier:Oven", 0.21147138250704042, 0.9135361027379957),
    ];
    let type_iii = [
        ("Supplier", 104.48711829907349, 4.6206063753808946e-07),
        ("Oven", 43.08803720238227, 2.0728305264193178e-05),
        ("Supplier:Oven", 0.21147138250704042, 0.9135361027379957),
    ];
    for (lines, expected) in [(&model.type_ii, type_ii), (&model.type_iii, type_iii)] {
        for (term, sum_sq, p) in expected {
            let line = row_of(lines, term);
            assert!(close(line.sum_sq, sum_sq, 1e-10), "{term}: {}", line.sum_sq);
            assert!(close(line.p_value.expect("p"), p, 1e-7), "{term}");
        }
    }
    // statsmodels 0.15.0: residual sum of squares 17.432833333333328 on 15 df.
    assert_eq!(model.residual_df, 15);
    let residual = row_of(&model.error_lines, "residual");
    assert!(close(residual.sum_sq, 17.432833333333328, 1e-10));
    // No interaction: the best supplier is the same in both ovens.
    assert!(outcome.reading.iter().all(|line| !line.contains("depends on")));
}

#[test]
fn unbalanced_three_factor_type_ii_and_iii_match_statsmodels() {
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join("three.xlsx");
    // The data generated for the statsmodels run (numpy 2.4.6 default_rng(7), rounded).
    let data: [(&str, &str, &str, f64); 26] = [
        ("dry", "L1", "slow", 20.0),
        ("dry", "L1", "slow", 20.2),
        ("dry", "L1", "fast", 19.0),
        ("dry", "L1", "fast", 18.6),
        ("dry", "L1", "fast", 18.9),
        ("dry", "L2", "slow", 21.3),
        ("dry", "L2", "fast", 21.2),
        ("dry", "L2", "fast", 22.1),
        ("dry", "L3", "slow", 22.8),
        ("dry", "L3", "slow", 22.7),
        ("dry", "L3", "slow", 23.4),
        ("dry", "L3", "fast", 22.5),
        ("dry", "L3", "fast", 22.4),
        ("wet", "L1", "slow", 20.8),
        ("wet", "L1", "slow", 21.5),
        ("wet", "L1", "fast", 22.4),
        ("wet", "L1", "fast", 21.0),
        ("wet", "L2", "slow", 23.2),
        ("wet", "L2", "slow", 22.2),
        ("wet", "L2", "slow", 22.6),
        ("wet", "L2", "fast", 22.6),
        ("wet", "L3", "slow", 24.4),
        ("wet", "L3", "slow", 23.7),
        ("wet", "L3", "fast", 25.2),
        ("wet", "L3", "fast", 25.1),
        ("wet", "L3", "fast", 24.9),
    ];
    // Recorded in reverse order, to show that order does not matter.
    let rows: Vec<Vec<Cell>> = data
        .iter()
        .rev()
        .map(|(mix, line, speed, y)| vec![text(mix), text(line), text(speed), Cell::Number(*y)])
        .collect();
    write_workbook(&path, &["Mix", "Line", "Speed", "Yield"], &rows, &[]);
    let outcome = analyse(&path, Settings::default());
    let model = outcome.model.as_ref().expect("model");
    assert_eq!(model.interaction_order, 3);
    // statsmodels 0.15.0: anova_lm(ols('Yield ~ C(Mix, Sum)*C(Line, Sum)*C(Speed, Sum)').fit(), typ=2 / typ=3)
    let type_ii = [
        ("Mix", 18.633706832871713, 1.5318691885303603e-07),
        ("Line", 49.053243593098955, 1.425370182429125e-09),
        ("Speed", 0.0057913204062772635, 0.8679348252234931),
        ("Mix:Line", 0.566996522380835, 0.2781256343989871),
        ("Mix:Speed", 2.0763325203160834, 0.0063339872694884855),
        ("Line:Speed", 0.48944309570432837, 0.3269790311788827),
        ("Mix:Line:Speed", 1.1957601713062387, 0.08462625204068686),
    ];
    let type_iii = [
        ("Mix", 15.579649122807083, 4.5360447152450763e-07),
        ("Line", 46.46265524625155, 2.040103863793122e-09),
        ("Speed", 0.0007017543859654122, 0.9538213551154513),
        ("Mix:Line", 0.6096074232690866, 0.2548634750715334),
        ("Mix:Speed", 1.3585964912282051, 0.0212231896493632),
        ("Line:Speed", 0.45842969307635345, 0.34920897093623643),
        ("Mix:Line:Speed", 1.1957601713062387, 0.08462625204068686),
    ];
    for (lines, expected) in [(&model.type_ii, type_ii), (&model.type_iii, type_iii)] {
        for (term, sum_sq, p) in expected {
            let line = row_of(lines, term);
            // Speed's sums of squares are tiny; compare them to the total's scale.
            assert!((line.sum_sq - sum_sq).abs() <= 1e-9 * 70.0, "{term}: {}", line.sum_sq);
            assert!(close(line.p_value.expect("p"), p, 1e-6), "{term}");
        }
    }
    // statsmodels 0.15.0: residual 2.8266666666666636 on 14 df.
    assert_eq!(model.residual_df, 14);
    assert!(close(
        row_of(&model.error_lines, "residual").sum_sq,
        2.8266666666666636,
        1e-10
    ));
    // Reduced model at alpha 0.05 (Type III): Mix, Line, Mix:Speed, and Speed by hierarchy.
    let reduced = outcome.reduced.as_ref().expect("reduced");
    assert_eq!(reduced.active_terms, ["Mix", "Line", "Mix:Speed"]);
    assert_eq!(reduced.terms, ["Mix", "Line", "Speed", "Mix:Speed"]);
}

/// Runs of a regular fraction: basic factors in standard order, each added factor the
/// product of the basic factors named in its generator (letters of the basic factors).
fn fraction_runs(n_basic: usize, generators: &[&str]) -> Vec<Vec<f64>> {
    (0..1usize << n_basic)
        .map(|run| {
            let mut levels: Vec<f64> = (0..n_basic)
                .map(|bit| if run & (1 << bit) != 0 { 1.0 } else { -1.0 })
                .collect();
            for generator in generators {
                let product = generator
                    .chars()
                    .map(|letter| levels[(letter as u8 - b'A') as usize])
                    .product();
                levels.push(product);
            }
            levels
        })
        .collect()
}

fn fraction_outcome(n_basic: usize, generators: &[&str], name: &str) -> FactorialOutcome {
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join(format!("{name}.xlsx"));
    let runs = fraction_runs(n_basic, generators);
    let n_factors = runs[0].len();
    let headers: Vec<String> = (0..n_factors).map(|f| format!("F{}", f + 1)).collect();
    let mut header_refs: Vec<&str> = headers.iter().map(String::as_str).collect();
    header_refs.push("Response");
    // Responses with a large first-factor effect and a deterministic wobble.
    let rows: Vec<Vec<Cell>> = runs
        .iter()
        .enumerate()
        .map(|(index, run)| {
            let mut cells: Vec<Cell> = run.iter().map(|level| Cell::Number(*level)).collect();
            cells.push(Cell::Number(50.0 + 6.0 * run[0] + ((index * 37 % 11) as f64) * 0.1));
            cells
        })
        .collect();
    let factor_list = headers.join(", ");
    write_workbook(&path, &header_refs, &rows, &[("factor", factor_list.as_str())]);
    analyse(&path, Settings::default())
}

#[test]
fn alias_structure_of_standard_fractions() {
    // Box, Hunter and Hunter, *Statistics for Experimenters*, 2nd ed. (2005), the
    // 2^(7-4) III with D = AB, E = AC, F = BC, G = ABC: seven words of length 3, seven
    // of length 4, one of length 7; A is aliased with BD, CE and FG (from memory,
    // checked by multiplying out the generators by hand).
    let outcome = fraction_outcome(3, &["AB", "AC", "BC", "ABC"], "seven");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.design.name, "2^(7-4) resolution III");
    assert_eq!(two.design.resolution, Some(3));
    assert_eq!(two.design.word_length_pattern, [0, 0, 7, 7, 0, 0, 1]);
    let a = two.effects.iter().find(|e| e.name == "A").expect("A");
    assert!(a.aliases.starts_with("A + BD + CE + FG"), "{}", a.aliases);
    assert!(two.aliasing_notes[0].contains("resolution III"));

    // 2^(6-2) IV with E = ABC, F = BCD: I = ABCE = BCDF = ADEF (three words of length
    // 4); AB is aliased with CE, AD with EF (same source, from memory).
    let outcome = fraction_outcome(4, &["ABC", "BCD"], "six");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.design.name, "2^(6-2) resolution IV");
    assert_eq!(two.design.word_length_pattern, [0, 0, 0, 3, 0, 0]);
    let chain = |name: &str| two.effects.iter().find(|e| e.name == name).expect(name).aliases.clone();
    assert!(chain("AB").starts_with("AB + CE"), "{}", chain("AB"));
    assert!(chain("AD").starts_with("AD + EF"), "{}", chain("AD"));

    // 2^(5-1) V with E = ABCD: I = ABCDE; A is aliased with BCDE only.
    let outcome = fraction_outcome(4, &["ABCD"], "five");
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(two.design.name, "2^(5-1) resolution V");
    assert_eq!(two.design.defining_relation, "I = ABCDE");
    assert_eq!(chain_of(two, "A"), "A + BCDE");
    // The large F1 effect is found and read as F1.
    assert!(two.effects.iter().any(|e| e.name == "A" && e.active));
}

fn chain_of(two: &engine::analysis::factorial::TwoLevelOutcome, name: &str) -> String {
    two.effects.iter().find(|e| e.name == name).expect(name).aliases.clone()
}

/// A 2^(4-1) IV with D = ABC (settings -1/+1) whose response is driven by A, B and
/// their interaction, so the AB + CD chain is active and ambiguous.
fn write_aliased_interaction(path: &Path) {
    let rows: Vec<Vec<Cell>> = fraction_runs(3, &["ABC"])
        .iter()
        .enumerate()
        .map(|(index, run)| {
            let mut cells: Vec<Cell> = run.iter().map(|level| Cell::Number(*level)).collect();
            let y = 20.0 + 5.0 * run[0] + 4.0 * run[1] + 3.0 * run[0] * run[1] + 0.05 * (index % 3) as f64;
            cells.push(Cell::Number(y));
            cells
        })
        .collect();
    write_workbook(
        path,
        &["A1", "B1", "C1", "D1", "Y"],
        &rows,
        &[("factor", "A1, B1, C1, D1")],
    );
}

#[test]
fn aliased_active_interactions_get_a_fold_over() {
    // 2^(4-1) IV with D = ABC: AB is aliased with CD. A response driven by A, B and
    // their interaction makes the AB + CD chain active and ambiguous.
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join("fold.xlsx");
    write_aliased_interaction(&path);
    let outcome = analyse(&path, Settings::default());
    let two = outcome.two_level.as_ref().expect("two-level");
    assert_eq!(chain_of(two, "AB"), "AB + CD");
    assert!(
        two.aliasing_notes
            .iter()
            .any(|note| note.contains("cannot tell them apart")),
        "{:?}",
        two.aliasing_notes
    );
    // Reversing any one factor removes the word ABCD and separates AB from CD.
    let follow_up = two.follow_up.as_ref().expect("follow-up");
    assert!(follow_up.contains("fold-over"), "{follow_up}");
}

#[test]
fn binary_writes_factorial_sheets_and_json() {
    let folder = tempfile::tempdir().expect("temp dir");
    let path = folder.path().join("eddy.xlsx");
    let rows: Vec<Vec<Cell>> = (0..8)
        .map(|run: usize| {
            let level = |bit: usize| text(if run & (1 << bit) != 0 { "on" } else { "off" });
            vec![level(0), level(1), level(2), Cell::Number(EDDY_RESPONSES[run])]
        })
        .collect();
    write_workbook(&path, &["Turns", "Distance", "Gauge", "Sensitivity"], &rows, &[]);
    let binary = crate::common::trialyst_path();
    let output = std::process::Command::new(&binary)
        .arg("run")
        .arg(&path)
        .arg("--json")
        .output()
        .expect("run trialyst");
    let listing: Vec<String> = std::fs::read_dir(folder.path())
        .map(|entries| {
            entries
                .filter_map(Result::ok)
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    let context = format!(
        "command: {} run {} --json\nfolder: {listing:?}\nstatus: {}\nstdout: {}\nstderr: {}",
        binary.display(),
        path.display(),
        output.status,
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
    assert!(output.status.success(), "{context}");
    let line = String::from_utf8_lossy(&output.stdout);
    let json: serde_json::Value = serde_json::from_str(line.lines().next().unwrap_or_default()).expect(&context);
    // Settings "off"/"on" are not numbers: no next trial can be placed, and the
    // optional field is left out of the document.
    assert!(json["responses"][0].get("next_trial").is_none(), "{context}");
    let factorial = &json["responses"][0]["factorial"];
    // "off" sorts before "on", so "off" is -1 and the effects keep the NIST signs.
    let first = &factorial["two_level"]["effects"][0];
    assert_eq!(first["name"], "A", "{context}");
    assert!(close(first["effect"].as_f64().unwrap_or(f64::NAN), 3.1025, 1e-12));
    // The results workbook, read back with calamine.
    let results_path = folder.path().join("eddy.results.xlsx");
    crate::common::keep_output(&results_path);
    let mut workbook = open_workbook_auto(&results_path).expect(&context);
    let sheets = workbook.sheet_names();
    for wanted in [
        "Factorial ANOVA",
        "Factorial means",
        "Effects",
        "Aliases",
        "Reduced model",
    ] {
        assert!(
            sheets.iter().any(|name| name == wanted),
            "no sheet '{wanted}' in {sheets:?}"
        );
    }
    let effects = workbook.worksheet_range("Effects").expect("Effects sheet");
    let header_row = effects
        .rows()
        .position(|row| row.first().is_some_and(|cell| *cell == Data::String("estimate".into())))
        .expect("effects table header");
    let first_row = effects.rows().nth(header_row + 1).expect("first effect row");
    assert_eq!(first_row[0], Data::String("A".into()));
    assert_eq!(first_row[1], Data::String("Turns".into()));
    match &first_row[3] {
        Data::Float(value) => assert!(close(*value, 3.1025, 1e-12), "{value}"),
        other => panic!("effect cell holds {other:?}"),
    }
    let summary = workbook.worksheet_range("Summary").expect("Summary sheet");
    let has_reading = summary.rows().any(|row| {
        row.first()
            .is_some_and(|cell| cell.to_string().contains("factorial reading"))
    });
    assert!(has_reading, "the Summary carries the factorial reading");
}

/// A trial of four recipes run once on each of five days, with Day named as blocks:
/// the comparisons of recipes take the days' shifts out and use the blocked model's
/// error. Invented data; reference statsmodels 0.15.0
/// `anova_lm(ols("y ~ C(day) + C(recipe)"), typ=1)`: SS days 30.29199999999987,
/// SS recipes 75.42549999999981, SS residual 1.051999999999992 on 12 df; every
/// difference of least-squares means has SE 0.1872609587358411.
#[test]
fn comparisons_in_a_blocked_trial_use_the_blocked_error() {
    let cure = [
        [41.2, 43.9, 40.1, 45.3],
        [42.8, 45.1, 41.7, 46.0],
        [39.9, 42.6, 39.0, 44.1],
        [43.5, 46.3, 42.2, 47.4],
        [40.6, 43.0, 40.4, 44.8],
    ];
    let mut rows = Vec::new();
    for (day, values) in cure.iter().enumerate() {
        for (recipe, value) in values.iter().enumerate() {
            rows.push(vec![
                text(&format!("D{}", day + 1)),
                text(&format!("R{}", recipe + 1)),
                Cell::Number(*value),
            ]);
        }
    }
    let folder = tempfile::tempdir().expect("temp folder");
    let path = folder.path().join("blocked.xlsx");
    write_workbook(
        &path,
        &["Day", "Recipe", "Cure time (min)"],
        &rows,
        &[("factors", "Recipe"), ("blocks", "Day")],
    );
    let results = analyse_workbook(&path, &AnalysisRequest::default()).expect("analysed");
    let fit = results.responses[0].fit().expect("one-way fit");
    let blocks = fit.blocks.as_ref().expect("the blocks were taken out");
    assert_eq!(blocks.factor, "Day");
    assert_eq!(fit.pooled_df, 12.0, "error df of the blocked model");
    assert!(
        close(fit.anova[0].ss, 75.42549999999981, 1e-11),
        "SS recipes {}",
        fit.anova[0].ss
    );
    assert!(close(blocks.ss, 30.29199999999987, 1e-11), "SS days {}", blocks.ss);
    for pair in &fit.pairs {
        assert!(close(pair.se, 0.1872609587358411, 1e-11), "SE {}", pair.se);
    }
    // Without the blocks the day-to-day spread would swamp the recipes' error.
    let unblocked = analyse_workbook(
        &{
            let plain = folder.path().join("plain.xlsx");
            write_workbook(
                &plain,
                &["Day", "Recipe", "Cure time (min)"],
                &rows,
                &[("factors", "Recipe")],
            );
            plain
        },
        &AnalysisRequest::default(),
    )
    .expect("analysed");
    let plain_fit = unblocked.responses[0].fit().expect("fit");
    assert!(plain_fit.blocks.is_none());
    assert!(plain_fit.pooled_sd > 3.0 * fit.pooled_sd);
}

/// A replicated 2^2 trial (invented: bond strength against oven temperature and
/// pressure) with one run typed at 175 where the plan has 160 and 180: the run is a data
/// problem at its cell and is left out of the factorial model, so Temperature keeps its
/// two levels and the two-level analysis runs (common practice: never recode silently).
#[test]
fn a_run_at_an_unplanned_setting_is_reported_and_left_out_of_the_factorial_model() {
    let settings = [
        (160.0, 2.0, 31.2),
        (180.0, 2.0, 35.9),
        (160.0, 4.0, 33.0),
        (180.0, 4.0, 38.1),
        (160.0, 2.0, 30.8),
        (175.0, 2.0, 35.1),
        (160.0, 4.0, 33.4),
        (180.0, 4.0, 37.7),
    ];
    let rows: Vec<Vec<Cell>> = settings
        .iter()
        .map(|&(temperature, pressure, strength)| {
            vec![
                Cell::Number(temperature),
                Cell::Number(pressure),
                Cell::Number(strength),
            ]
        })
        .collect();
    let folder = tempfile::tempdir().expect("temp folder");
    let path = folder.path().join("bond.xlsx");
    write_workbook(
        &path,
        &["Temperature", "Pressure", "Bond strength (N)"],
        &rows,
        &[("factors", "Temperature, Pressure")],
    );
    let results = analyse_workbook(&path, &AnalysisRequest::default()).expect("analysed");
    let departure = results
        .findings
        .iter()
        .find(|finding| finding.kind == workbook_io::layout::FindingKind::PlanDeparture)
        .expect("the run at 175 is reported");
    assert_eq!(departure.cell.as_deref(), Some("A7"), "{departure:?}");
    assert!(departure.message.contains("175"), "{}", departure.message);
    let factorial = results.responses[0].factorial.as_ref().expect("factorial outcome");
    let temperature = &factorial.factors[0];
    assert_eq!(temperature.levels, vec!["160".to_string(), "180".to_string()]);
    assert!(factorial.two_level.is_some(), "the two-level analysis runs");
    assert_eq!(factorial.n_values, 7);
}

/// The one-sentence next-trial recommendation of a screening workbook analysed
/// through the service.
fn next_trial_of(path: &Path, settings: Settings) -> Option<String> {
    let request = AnalysisRequest {
        settings,
        ..AnalysisRequest::default()
    };
    let results = analyse_workbook(path, &request).expect("analysed");
    results.responses[0].next_trial.clone()
}

/// A 2^3 full factorial in real settings (temperature 150/170, time 20/30, pressure
/// 2/3) with four centre runs (160, 25, 2.5); `response` gives the value from the coded
/// settings and the run's index.
fn screen_with_centre(path: &Path, response: impl Fn(&[f64], usize) -> f64, direction: &str) {
    let real = |coded: &[f64]| vec![160.0 + 10.0 * coded[0], 25.0 + 5.0 * coded[1], 2.5 + 0.5 * coded[2]];
    let mut coded_runs = fraction_runs(3, &[]);
    coded_runs.extend(std::iter::repeat_n(vec![0.0, 0.0, 0.0], 4));
    let rows: Vec<Vec<Cell>> = coded_runs
        .iter()
        .enumerate()
        .map(|(index, coded)| {
            let mut cells: Vec<Cell> = real(coded).into_iter().map(Cell::Number).collect();
            cells.push(Cell::Number(response(coded, index)));
            cells
        })
        .collect();
    write_workbook(
        path,
        &["Temperature", "Time", "Pressure", "Yield"],
        &rows,
        &[("factor", "Temperature, Time, Pressure"), ("direction", direction)],
    );
}

#[test]
fn screening_results_name_the_next_trial() {
    // The kinds of next step follow the order of sequential experimentation (Box,
    // Hunter and Hunter, "Statistics for Experimenters", 2nd ed., ch. 6 and 12, from
    // memory): aliased active effects -> fold-over; curvature -> complete a central
    // composite; clear first-order effects, no curvature -> steepest ascent/descent.
    let folder = tempfile::tempdir().expect("temp dir");

    // 2^(4-1) IV with D = ABC and an active AB + CD chain: a fold-over.
    let path = folder.path().join("fold.xlsx");
    write_aliased_interaction(&path);
    let sentence = next_trial_of(&path, Settings::default()).expect("a recommendation");
    assert!(sentence.contains("fold-over"), "{sentence}");

    // Linear in temperature and time, centre runs on the plane: steepest ascent when
    // higher is better, descent when lower is, the first step moving temperature (the
    // larger effect) up or down.
    let wobble = [0.3, -0.2, 0.1, -0.25, 0.15, -0.1, 0.2, -0.3, 0.25, -0.15, 0.05, -0.2];
    for (direction, path_kind, first_move) in [
        ("higher", "steepest ascent", "Temperature +"),
        ("lower", "steepest descent", "Temperature -"),
    ] {
        let path = folder.path().join(format!("climb-{direction}.xlsx"));
        screen_with_centre(
            &path,
            |coded, index| 60.0 + 8.0 * coded[0] + 5.0 * coded[1] + wobble[index],
            direction,
        );
        let sentence = next_trial_of(&path, Settings::default()).expect("a recommendation");
        assert!(sentence.contains(path_kind), "{sentence}");
        assert!(sentence.contains(first_move), "{sentence}");
    }

    // Centre runs well above the corners: curvature, so complete a central composite.
    let path = folder.path().join("curved.xlsx");
    screen_with_centre(
        &path,
        |coded, index| {
            let centre = coded.iter().all(|value| *value == 0.0);
            60.0 + 8.0 * coded[0] + if centre { 12.0 } else { 0.0 } + wobble[index]
        },
        "higher",
    );
    let sentence = next_trial_of(&path, Settings::default()).expect("a recommendation");
    assert!(sentence.contains("central composite"), "{sentence}");
}
