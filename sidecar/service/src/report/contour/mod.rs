//! Contour maps of fitted second-order surfaces: for each response with a second-order
//! analysis, a picture for each pair of its important factors, the other factors held
//! at the recommended settings, on a sheet of their own (one picture a printed page, so
//! that no table is covered and each prints whole on A4 and Letter).
//!
//! Which pairs: the factors with a term (linear, square, or an interaction with any
//! other factor) whose p-value is below 1 − confidence, strongest first (by the least
//! p-value among its terms), at most [`MOST_FACTORS`] of them, so at most six pictures a
//! response however many factors were run; when fewer than two factors qualify, the two
//! with the strongest terms, and the sheet says so.
//!
//! Each picture: filled bands of the predicted response between contour levels at round
//! numbers, the level lines with their values, the runs (filled where the held factors
//! were run at the held settings, open elsewhere; a count beside a point run more than
//! once), the recommended settings, the limits of the settings run (dashed) and the
//! region of the analysis (the sphere through the farthest run, dotted), axes in the
//! factors' own units, and a key of the bands. Drawn by [`raster`] at 1.5 pixels per
//! pixel shown (for print), encoded as PNG.

pub mod geometry;
pub mod raster;

use engine::analysis::surface::SurfaceOutcome;
use workbook_io::write::{Book, Look, Picture, Sheet, Value};

use crate::WorkbookResults;
use geometry::{decimals_of_step, round_levels, Grid, Quadratic2};
use raster::{grey_of, scale_colour, Anchor, Canvas, Rgb, BLACK, WHITE};

/// The sheet's name.
pub const CONTOUR_SHEET: &str = "Surface maps";

/// The most factors whose pairs are drawn for one response (six pictures).
pub const MOST_FACTORS: usize = 4;

/// The size a picture is shown at, in pixels at 96 an inch: 585 × 405 points, which
/// fits the landscape printable area of A4 and Letter at full scale with a heading row.
pub const SHOWN: (u32, u32) = (780, 540);

/// Pixels drawn per pixel shown.
const RESOLUTION: f64 = 1.5;

/// The width of the sheet's first column, where its notes wrap, in characters.
const NOTE_WIDTH: f64 = 100.0;

/// Rows of the default height a picture covers.
const PICTURE_ROWS: u32 = 27;

/// The factors whose pairs are drawn, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorChoice {
    /// Factor indices, strongest first.
    pub factors: Vec<usize>,
    /// The rule in words, naming the factors.
    pub reason: String,
}

/// The factors of `outcome` whose pairs are drawn at significance level `alpha`.
pub fn important_factors(outcome: &SurfaceOutcome, alpha: f64) -> FactorChoice {
    let k = outcome.factor_names.len();
    // Coefficients: the intercept, then the terms in `term_names` order: linear,
    // interactions (i < j), squares.
    let p_of = |term: usize| -> f64 {
        outcome
            .coefficients
            .get(1 + term)
            .and_then(|line| line.p_value)
            .filter(|p| p.is_finite())
            .unwrap_or(1.0)
    };
    let mut strongest = vec![1.0f64; k];
    let mut pair = k;
    for i in 0..k {
        strongest[i] = strongest[i].min(p_of(i)).min(p_of(k + k * (k - 1) / 2 + i));
        for j in i + 1..k {
            let p = p_of(pair);
            strongest[i] = strongest[i].min(p);
            strongest[j] = strongest[j].min(p);
            pair += 1;
        }
    }
    let mut order: Vec<usize> = (0..k).collect();
    order.sort_by(|a, b| strongest[*a].total_cmp(&strongest[*b]).then(a.cmp(b)));
    let significant: Vec<usize> = order
        .iter()
        .copied()
        .filter(|index| strongest[*index] < alpha)
        .collect();
    let percent = engine::analysis::verdict::round_for_text(alpha * 100.0, 3);
    let names = |indices: &[usize]| {
        indices
            .iter()
            .map(|index| outcome.factor_names[*index].as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    if significant.len() >= 2 {
        let mut factors = significant.clone();
        factors.truncate(MOST_FACTORS);
        let left_out = if significant.len() > MOST_FACTORS {
            format!(
                " (the {MOST_FACTORS} strongest of {}; not drawn: {})",
                significant.len(),
                names(&significant[MOST_FACTORS..])
            )
        } else {
            String::new()
        };
        FactorChoice {
            reason: format!(
                "Pairs of the factors with a term (linear, square or interaction) significant at the {percent}% level: {}{left_out}.",
                names(&factors)
            ),
            factors,
        }
    } else {
        let factors: Vec<usize> = order.iter().copied().take(2).collect();
        FactorChoice {
            reason: format!(
                "Fewer than two factors have a term significant at the {percent}% level, so the two with the strongest terms are drawn: {}.",
                names(&factors)
            ),
            factors,
        }
    }
}

/// The settings (coded) the other factors are held at, and their name in words.
fn held_settings(outcome: &SurfaceOutcome) -> (Vec<f64>, &'static str) {
    let k = outcome.factor_names.len();
    if let Some(best) = &outcome.recommended {
        return (best.coded.clone(), "the recommended settings");
    }
    if let Some(point) = outcome.stationary.as_ref().filter(|point| point.inside_region) {
        return (point.coded.clone(), "the stationary point");
    }
    (vec![0.0; k], "the centre of the plan")
}

/// Adds the sheet of contour maps when some response has a second-order analysis of at
/// least two factors.
pub fn add_contour_sheet(results: &WorkbookResults, book: &mut Book) {
    let alpha = 1.0
        - results
            .settings
            .confidence
            .unwrap_or(engine::options::DEFAULT_CONFIDENCE);
    let analysed: Vec<(&crate::ResponseResult, &SurfaceOutcome)> = results
        .responses
        .iter()
        .filter_map(|response| response.surface.as_deref().map(|outcome| (response, outcome)))
        .filter(|(_, outcome)| outcome.factor_names.len() >= 2)
        .collect();
    if analysed.is_empty() {
        return;
    }
    let mut sheet = Sheet::new(CONTOUR_SHEET);
    sheet.widths = vec![(0, NOTE_WIDTH)];
    sheet.put(0, 0, Value::text("Maps of the fitted surfaces"), Look::Title);
    let mut row = 1;
    // The maps to draw: (heading, outcome, response, unit, pair, held settings, their name).
    type Job<'a> = (
        String,
        &'a SurfaceOutcome,
        &'a str,
        Option<&'a str>,
        (usize, usize),
        Vec<f64>,
        &'static str,
    );
    let mut jobs: Vec<Job<'_>> = Vec::new();
    for (response, outcome) in &analysed {
        let choice = important_factors(outcome, alpha);
        let (held, held_words) = held_settings(outcome);
        let pairs: Vec<(usize, usize)> = choice
            .factors
            .iter()
            .enumerate()
            .flat_map(|(at, first)| choice.factors[at + 1..].iter().map(move |second| (*first, *second)))
            .collect();
        let others_held = match (outcome.factor_names.len() > 2, pairs.len()) {
            (false, _) => String::new(),
            (true, 1) => format!(" The map holds the other factors at {held_words}."),
            (true, _) => format!(" Each map holds the other factors at {held_words}."),
        };
        sheet.paragraph(
            row,
            0,
            format!(
                "{}: {}. {}{others_held}",
                response.name,
                engine::analysis::verdict::count_of(pairs.len(), "map"),
                choice.reason
            ),
            Look::Note,
            NOTE_WIDTH,
        );
        row += 1;
        for (first, second) in pairs {
            jobs.push((
                format!(
                    "{}: {} and {}",
                    response.name, outcome.factor_names[first], outcome.factor_names[second]
                ),
                outcome,
                response.name.as_str(),
                response.unit.as_deref(),
                (first, second),
                held.clone(),
                held_words,
            ));
        }
    }
    // Drawn on as many threads as the machine offers, each taking every n-th map.
    let threads = std::thread::available_parallelism()
        .map_or(1, usize::from)
        .clamp(1, jobs.len().max(1));
    let mut drawn: Vec<Option<Picture>> = vec![None; jobs.len()];
    std::thread::scope(|scope| {
        let handles: Vec<_> = (0..threads)
            .map(|offset| {
                let jobs = &jobs;
                scope.spawn(move || {
                    jobs.iter()
                        .enumerate()
                        .skip(offset)
                        .step_by(threads)
                        .map(
                            |(index, (_, outcome, response, unit, (first, second), held, held_words))| {
                                (
                                    index,
                                    draw_pair(outcome, response, *unit, *first, *second, held, held_words),
                                )
                            },
                        )
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        for handle in handles {
            // A drawing thread cannot panic on finite input; a map lost to one is left out.
            if let Ok(pictures) = handle.join() {
                for (index, picture) in pictures {
                    drawn[index] = Some(picture);
                }
            }
        }
    });
    let pages: Vec<(String, Picture)> = jobs
        .into_iter()
        .zip(drawn)
        .filter_map(|(job, picture)| picture.map(|picture| (job.0, picture)))
        .collect();
    sheet.paragraph(
        row,
        0,
        "How to read a map: bands of the predicted response, lighter for higher, with the level lines and their values; the runs are marked; the dashed box is the limits of the settings run and the dotted curve the region of the analysis. Predictions beyond the runs are guesses.",
        Look::Note,
        NOTE_WIDTH,
    );
    row += 1;
    sheet.paragraph(
        row,
        0,
        "A statistical result does not by itself approve a process change.",
        Look::Caution,
        NOTE_WIDTH,
    );
    row += 2;
    for (heading, mut picture) in pages {
        sheet.page_breaks.push(row);
        sheet.put(row + 1, 0, Value::text(heading), Look::Heading);
        picture.anchor = (row + 2, 0);
        sheet.pictures.push(picture);
        row += 2 + PICTURE_ROWS + 1;
    }
    book.sheets.push(sheet);
}

/// The coded range of factor `index` over the runs (−1 to 1 when the runs do not spread).
fn run_range(outcome: &SurfaceOutcome, index: usize) -> (f64, f64) {
    let (centre, half) = outcome.coding[index];
    let coded = outcome.run_settings().iter().map(|run| (run[index] - centre) / half);
    let (low, high) = coded.fold((f64::MAX, f64::MIN), |(low, high), value| {
        (low.min(value), high.max(value))
    });
    if high - low > 1e-9 {
        (low, high)
    } else {
        (-1.0, 1.0)
    }
}

/// A number written with the decimals of a step of `step`.
fn written(value: f64, step: f64) -> String {
    let places = decimals_of_step(step);
    let text = format!("{value:.places$}");
    if text.trim_start_matches(['-', '0', '.']).is_empty() {
        format!("{:.places$}", 0.0)
    } else {
        text
    }
}

/// The picture of the fitted surface over factors `first` (across) and `second` (up),
/// the others held at `held` (coded).
pub fn draw_pair(
    outcome: &SurfaceOutcome,
    response: &str,
    unit: Option<&str>,
    first: usize,
    second: usize,
    held: &[f64],
    held_words: &str,
) -> Picture {
    let k = outcome.factor_names.len();
    let surface = Quadratic2::through(|x, y| {
        let mut coded = held.to_vec();
        coded[first] = x;
        coded[second] = y;
        outcome.predict_coded(&coded)
    });
    let s = RESOLUTION;
    let (width, height) = ((f64::from(SHOWN.0) * s) as u32, (f64::from(SHOWN.1) * s) as u32);
    let mut canvas = Canvas::new(width, height, WHITE);
    // The plot area, in canvas pixels.
    let (left, top, size_x, size_y) = (92.0 * s, 58.0 * s, 400.0 * s, 400.0 * s);
    let (right, bottom) = (left + size_x, top + size_y);
    // The window in coded units: the runs' range and 6% more on each side.
    let window = |index: usize| {
        let (low, high) = run_range(outcome, index);
        let pad = 0.06 * (high - low);
        ((low, high), (low - pad, high + pad))
    };
    let ((x_low_run, x_high_run), (x_min, x_max)) = window(first);
    let ((y_low_run, y_high_run), (y_min, y_max)) = window(second);
    let to_px = |x: f64, y: f64| {
        (
            left + (x - x_min) / (x_max - x_min) * size_x,
            bottom - (y - y_min) / (y_max - y_min) * size_y,
        )
    };
    let from_px = |px: f64, py: f64| {
        (
            x_min + (px - left) / size_x * (x_max - x_min),
            y_min + (bottom - py) / size_y * (y_max - y_min),
        )
    };

    // Levels and bands.
    let grid = Grid::sample(161, 161, (x_min, x_max), (y_min, y_max), |x, y| surface.at(x, y));
    let (low, high) = grid.range().unwrap_or((0.0, 1.0));
    let levels = round_levels(low, high, 9);
    let step = if levels.len() >= 2 {
        levels[1] - levels[0]
    } else {
        (high - low).abs().max(1e-12)
    };
    let bands = levels.len() + 1;
    let band_colour = |band: usize| {
        if bands <= 1 {
            scale_colour(0.5)
        } else {
            scale_colour(band as f64 / (bands - 1) as f64)
        }
    };
    for py in top as u32..bottom as u32 {
        for px in left as u32..right as u32 {
            let (x, y) = from_px(f64::from(px) + 0.5, f64::from(py) + 0.5);
            let value = surface.at(x, y);
            let band = levels.partition_point(|level| *level <= value);
            canvas.pixels[py as usize * width as usize + px as usize] = band_colour(band);
        }
    }
    // Level lines, dark on light bands and light on dark ones.
    let line_colour = |index: usize| -> Rgb {
        let lighter = band_colour(index + 1);
        if grey_of(lighter) > 110.0 {
            [20, 20, 20]
        } else {
            [235, 235, 235]
        }
    };
    // Labels keep clear of the runs' marks and of the dashed box of the limits.
    let run_points: Vec<(f64, f64)> = outcome
        .run_settings()
        .iter()
        .map(|run| {
            let coded = outcome.to_coded(run);
            to_px(coded[first], coded[second])
        })
        .collect();
    let (box_left, box_top) = to_px(x_low_run, y_high_run);
    let (box_right, box_bottom) = to_px(x_high_run, y_low_run);
    let clear_of_marks = |px: f64, py: f64| {
        let marks = run_points
            .iter()
            .map(|(x, y)| (px - x).hypot(py - y))
            .fold(f64::MAX, f64::min);
        let box_edge = [(px - box_left).abs(), (px - box_right).abs()]
            .into_iter()
            .filter(|_| py > box_top - 8.0 * s && py < box_bottom + 8.0 * s)
            .chain(
                [(py - box_top).abs(), (py - box_bottom).abs()]
                    .into_iter()
                    .filter(|_| px > box_left - 20.0 * s && px < box_right + 20.0 * s),
            )
            .fold(f64::MAX, f64::min);
        (marks - 8.0 * s).min(2.0 * (box_edge - 4.0 * s))
    };
    let mut label_spots: Vec<(f64, f64, f64)> = Vec::new();
    for (index, level) in levels.iter().enumerate() {
        let segments = grid.level_segments(*level);
        for [a, b] in &segments {
            canvas.line(to_px(a.0, a.1), to_px(b.0, b.1), 1.1 * s, line_colour(index));
        }
        // The label where the line is farthest from the edges and the labels placed.
        let mut best: Option<((f64, f64), f64)> = None;
        for [a, b] in segments.iter().step_by(3) {
            let (px, py) = to_px((a.0 + b.0) / 2.0, (a.1 + b.1) / 2.0);
            let edge = (px - left).min(right - px).min(py - top).min(bottom - py).min(60.0 * s);
            let apart = label_spots
                .iter()
                .map(|(lx, ly, _)| (px - lx).hypot(py - ly))
                .fold(200.0 * s, f64::min);
            let score = edge.min(apart / 2.0).min(clear_of_marks(px, py));
            if best.is_none_or(|(_, before)| score > before) {
                best = Some(((px, py), score));
            }
        }
        if let Some(((px, py), score)) = best.filter(|(_, score)| *score > 14.0 * s) {
            label_spots.push((px, py, *level));
            let _ = score;
        }
    }
    for (px, py, level) in &label_spots {
        let text = written(*level, step);
        let half = f64::from(raster::text_width(&text, 11.0 * s as f32)) / 2.0 + 3.0 * s;
        let (box_top, box_bottom) = (py - 8.0 * s, py + 8.0 * s);
        for y in box_top as i64..box_bottom as i64 {
            for x in (px - half) as i64..(px + half) as i64 {
                canvas.blend(x, y, WHITE, 0.85);
            }
        }
        canvas.text(&text, (*px, *py), 11.0 * s as f32, Anchor::Centre, BLACK, false);
    }

    // The limits of the settings run (dashed) and the region of the analysis (dotted).
    let corners = [
        to_px(x_low_run, y_low_run),
        to_px(x_high_run, y_low_run),
        to_px(x_high_run, y_high_run),
        to_px(x_low_run, y_high_run),
    ];
    for side in 0..4 {
        canvas.dashed_line(corners[side], corners[(side + 1) % 4], 1.3 * s, BLACK, 7.0 * s, 4.0 * s);
    }
    let held_sq: f64 = (0..k)
        .filter(|index| *index != first && *index != second)
        .map(|index| held[index] * held[index])
        .sum();
    let circle_sq = outcome.region_radius * outcome.region_radius - held_sq;
    if circle_sq > 0.0 {
        let radius = circle_sq.sqrt();
        let inside = |x: f64, y: f64| x >= x_min && x <= x_max && y >= y_min && y <= y_max;
        // Dots about five pixels apart (shown) along the curve.
        let perimeter = std::f64::consts::TAU * radius * (size_x / (x_max - x_min)).max(size_y / (y_max - y_min));
        let steps = (perimeter / (5.0 * s)).ceil().max(24.0) as usize;
        for step_index in 0..steps {
            let angle = step_index as f64 / steps as f64 * std::f64::consts::TAU;
            let (x, y) = (radius * angle.cos(), radius * angle.sin());
            if inside(x, y) {
                canvas.disc(to_px(x, y), 1.1 * s, BLACK);
            }
        }
    }

    // The runs.
    let others: Vec<usize> = (0..k).filter(|index| *index != first && *index != second).collect();
    let mut marks: Vec<((i64, i64), bool, usize)> = Vec::new();
    for run in outcome.run_settings() {
        let coded = outcome.to_coded(run);
        let at_held = others.iter().all(|index| (coded[*index] - held[*index]).abs() <= 0.05);
        let (px, py) = to_px(coded[first], coded[second]);
        let key = ((px * 4.0).round() as i64, (py * 4.0).round() as i64);
        match marks.iter_mut().find(|mark| mark.0 == key && mark.1 == at_held) {
            Some(mark) => mark.2 += 1,
            None => marks.push((key, at_held, 1)),
        }
    }
    // Open marks first, so that a filled mark at the same point shows inside.
    marks.sort_by_key(|mark| mark.1);
    for ((kx, ky), at_held, count) in &marks {
        let centre = (*kx as f64 / 4.0, *ky as f64 / 4.0);
        draw_run_mark(&mut canvas, centre, *at_held, s);
        if *count > 1 {
            let text = format!("×{count}");
            let offset = if *at_held {
                (9.0 * s, -9.0 * s)
            } else {
                (9.0 * s, 9.0 * s)
            };
            let at = (centre.0 + offset.0, centre.1 + offset.1);
            let half = f64::from(raster::text_width(&text, 10.0 * s as f32));
            for y in (at.1 - 7.0 * s) as i64..(at.1 + 7.0 * s) as i64 {
                for x in (at.0 - 1.0 * s) as i64..(at.0 + half + 2.0 * s) as i64 {
                    canvas.blend(x, y, WHITE, 0.85);
                }
            }
            canvas.text(&text, at, 10.0 * s as f32, Anchor::Left, BLACK, false);
        }
    }
    let recommended = outcome
        .recommended
        .as_ref()
        .map(|best| (best.coded[first], best.coded[second]));
    if let Some((x, y)) = recommended {
        draw_cross(&mut canvas, to_px(x, y), s);
    }

    // Frame, ticks and axis titles in real units.
    for (a, b) in [
        ((left, top), (right, top)),
        ((right, top), (right, bottom)),
        ((right, bottom), (left, bottom)),
        ((left, bottom), (left, top)),
    ] {
        canvas.line(a, b, 1.0 * s, BLACK);
    }
    let (first_centre, first_half) = outcome.coding[first];
    let (second_centre, second_half) = outcome.coding[second];
    let real_x = (first_centre + x_min * first_half, first_centre + x_max * first_half);
    let real_y = (second_centre + y_min * second_half, second_centre + y_max * second_half);
    let ticks_x = round_levels(real_x.0, real_x.1, 6);
    let ticks_y = round_levels(real_y.0, real_y.1, 6);
    let tick_step = |ticks: &[f64]| if ticks.len() >= 2 { ticks[1] - ticks[0] } else { 1.0 };
    for tick in &ticks_x {
        let (px, _) = to_px((tick - first_centre) / first_half, 0.0);
        canvas.line((px, bottom), (px, bottom + 5.0 * s), 1.0 * s, BLACK);
        canvas.text(
            &written(*tick, tick_step(&ticks_x)),
            (px, bottom + 14.0 * s),
            12.0 * s as f32,
            Anchor::Centre,
            BLACK,
            false,
        );
    }
    for tick in &ticks_y {
        let (_, py) = to_px(0.0, (tick - second_centre) / second_half);
        canvas.line((left - 5.0 * s, py), (left, py), 1.0 * s, BLACK);
        canvas.text(
            &written(*tick, tick_step(&ticks_y)),
            (left - 8.0 * s, py),
            12.0 * s as f32,
            Anchor::Right,
            BLACK,
            false,
        );
    }
    let first_name = &outcome.factor_names[first];
    let second_name = &outcome.factor_names[second];
    canvas.text(
        first_name,
        ((left + right) / 2.0, bottom + 36.0 * s),
        13.0 * s as f32,
        Anchor::Centre,
        BLACK,
        false,
    );
    canvas.text(
        second_name,
        (22.0 * s, (top + bottom) / 2.0),
        13.0 * s as f32,
        Anchor::Centre,
        BLACK,
        true,
    );

    // Title and the settings held.
    let title = format!("{response}: the fitted surface over {first_name} and {second_name}");
    canvas.text(
        &title,
        (16.0 * s, 16.0 * s),
        16.0 * s as f32,
        Anchor::Left,
        BLACK,
        false,
    );
    let held_line = if others.is_empty() {
        "Predicted by the second-order model; both factors vary, so nothing is held.".to_string()
    } else {
        let settings: Vec<String> = others
            .iter()
            .map(|index| {
                let (centre, half) = outcome.coding[*index];
                let real = centre + held[*index] * half;
                format!(
                    "{} = {}",
                    outcome.factor_names[*index],
                    engine::analysis::verdict::round_for_text(real, 4)
                )
            })
            .collect();
        format!("Other factors held at {held_words}: {}", settings.join(", "))
    };
    canvas.text(
        &held_line,
        (16.0 * s, 38.0 * s),
        12.0 * s as f32,
        Anchor::Left,
        BLACK,
        false,
    );

    // The key of the bands.
    let key_left = right + 40.0 * s;
    let key_width = 18.0 * s;
    let band_height = size_y / bands as f64;
    for band in 0..bands {
        let band_bottom = bottom - band as f64 * band_height;
        canvas.fill_rect(
            key_left,
            band_bottom - band_height,
            key_left + key_width,
            band_bottom,
            band_colour(band),
        );
    }
    for (a, b) in [
        ((key_left, top), (key_left + key_width, top)),
        ((key_left + key_width, top), (key_left + key_width, bottom)),
        ((key_left + key_width, bottom), (key_left, bottom)),
        ((key_left, bottom), (key_left, top)),
    ] {
        canvas.line(a, b, 1.0 * s, BLACK);
    }
    for (index, level) in levels.iter().enumerate() {
        let py = bottom - (index + 1) as f64 * band_height;
        canvas.line(
            (key_left + key_width, py),
            (key_left + key_width + 4.0 * s, py),
            1.0 * s,
            BLACK,
        );
        canvas.text(
            &written(*level, step),
            (key_left + key_width + 7.0 * s, py),
            11.0 * s as f32,
            Anchor::Left,
            BLACK,
            false,
        );
    }
    let key_title = match unit {
        Some(unit) if !unit.trim().is_empty() && !response.contains(unit.trim()) => {
            format!("predicted {response} ({unit})")
        }
        _ => format!("predicted {response}"),
    };
    canvas.text(
        &key_title,
        (key_left - 8.0 * s, top - 10.0 * s),
        11.0 * s as f32,
        Anchor::Left,
        BLACK,
        false,
    );

    // The legend under the plot.
    let legend_y = bottom + 60.0 * s;
    let mut x = left;
    let mut entry = |canvas: &mut Canvas, draw: &dyn Fn(&mut Canvas, (f64, f64)), words: &str| {
        draw(canvas, (x + 8.0 * s, legend_y));
        let (_, _, end, _) = canvas.text(
            words,
            (x + 20.0 * s, legend_y),
            11.0 * s as f32,
            Anchor::Left,
            BLACK,
            false,
        );
        x = end + 16.0 * s;
    };
    if others.is_empty() {
        entry(&mut canvas, &|canvas, at| draw_run_mark(canvas, at, true, s), "a run");
    } else {
        entry(
            &mut canvas,
            &|canvas, at| draw_run_mark(canvas, at, true, s),
            "run at the held settings",
        );
        entry(
            &mut canvas,
            &|canvas, at| draw_run_mark(canvas, at, false, s),
            "run at other settings of the held factors",
        );
    }
    if recommended.is_some() {
        entry(&mut canvas, &|canvas, at| draw_cross(canvas, at, s), "recommended");
    }
    entry(
        &mut canvas,
        &|canvas, (cx, cy)| {
            canvas.dashed_line((cx - 9.0 * s, cy), (cx + 9.0 * s, cy), 1.3 * s, BLACK, 7.0 * s, 4.0 * s)
        },
        "limits run",
    );
    entry(
        &mut canvas,
        &|canvas, (cx, cy)| {
            for n in 0..4 {
                canvas.disc((cx - 7.5 * s + f64::from(n) * 5.0 * s, cy), 1.1 * s, BLACK);
            }
        },
        "region of the analysis",
    );

    let description = format!(
        "Contour map of the predicted {response} over {first_name} (across) and {second_name} (up), from {} to {} and {} to {}; levels {}",
        written(real_x.0, tick_step(&ticks_x) / 10.0),
        written(real_x.1, tick_step(&ticks_x) / 10.0),
        written(real_y.0, tick_step(&ticks_y) / 10.0),
        written(real_y.1, tick_step(&ticks_y) / 10.0),
        levels.iter().map(|level| written(*level, step)).collect::<Vec<_>>().join(", ")
    );
    Picture {
        png: canvas.to_png(),
        anchor: (0, 0),
        size: SHOWN,
        description,
    }
}

fn draw_run_mark(canvas: &mut Canvas, centre: (f64, f64), filled: bool, s: f64) {
    if filled {
        canvas.disc(centre, 6.0 * s, WHITE);
        canvas.disc(centre, 4.5 * s, BLACK);
    } else {
        canvas.ring(centre, 5.0 * s, 3.6 * s, WHITE);
        canvas.ring(centre, 5.0 * s, 1.6 * s, BLACK);
    }
}

fn draw_cross(canvas: &mut Canvas, (cx, cy): (f64, f64), s: f64) {
    let arm = 7.0 * s;
    for (width, colour) in [(4.5 * s, WHITE), (2.0 * s, BLACK)] {
        canvas.line((cx - arm, cy - arm), (cx + arm, cy + arm), width, colour);
        canvas.line((cx - arm, cy + arm), (cx + arm, cy - arm), width, colour);
    }
}

#[cfg(test)]
mod tests;
