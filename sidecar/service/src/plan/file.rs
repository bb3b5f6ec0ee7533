//! Reading a plan request from a small TOML file (`trialyst plan --from`).
//!
//! ```toml
//! response = "Yield (%)"          # or a list: ["Yield (%)", "Haze"]
//! replicates = 2
//! centre_points = 3
//! blocks = 2
//! runs = 16                       # runs of one replicate of a two-level fraction
//! generators = ["E = ABC"]        # or leave out to search
//! seed = 20260309
//! date = "2026-03-09"
//!
//! [[factor]]
//! name = "Temperature"
//! levels = [160, 180]
//!
//! [[factor]]
//! name = "Supplier"
//! levels = ["North", "South", "East"]
//! ```
//!
//! A response-surface plan names its design, perhaps its axial rule, and each
//! factor's low and high settings, with the settings the process can reach:
//!
//! ```toml
//! design = "central-composite"    # or "box-behnken"
//! axial = "faces"                 # rotatable (default), orthogonal-blocks, faces or a distance
//!
//! [[factor]]
//! name = "Temperature"
//! levels = [160, 180]
//! lowest = 150                    # optional: the axial runs never go below
//! highest = 185                   # optional: nor above
//! ```
//!
//! Errors name the key and the line.

use serde::Deserialize;
use toml::Spanned;

use engine::design::{FactorSpec, Level, PlanRequest};

use super::surface_choice::{read_axial, read_design, SurfaceChoice};
use super::FactorLimits;

/// Why a plan file could not be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum PlanFileError {
    /// The file is not valid TOML or has a key we do not know (the message
    /// gives the line and column).
    #[error("{file}: {message}")]
    Syntax {
        /// The file name.
        file: String,
        /// The parser's message, with line and column.
        message: String,
    },
    /// A value does not fit its key.
    #[error("{file}, line {line}: '{key}' {rule}")]
    BadValue {
        /// The file name.
        file: String,
        /// The line, from 1.
        line: usize,
        /// The key.
        key: String,
        /// What is accepted.
        rule: String,
    },
}

#[derive(Debug, Deserialize)]
#[serde(untagged)]
enum OneOrMany {
    One(String),
    Many(Vec<String>),
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawFactor {
    name: Spanned<String>,
    levels: Spanned<Vec<Spanned<toml::Value>>>,
    lowest: Option<Spanned<toml::Value>>,
    highest: Option<Spanned<toml::Value>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawPlanFile {
    #[serde(alias = "responses")]
    response: Option<OneOrMany>,
    #[serde(default, alias = "factors")]
    factor: Vec<RawFactor>,
    replicates: Option<Spanned<i64>>,
    #[serde(alias = "centre-points", alias = "center_points", alias = "center-points")]
    centre_points: Option<Spanned<i64>>,
    blocks: Option<Spanned<i64>>,
    runs: Option<Spanned<i64>>,
    #[serde(default, alias = "generator")]
    generators: Vec<String>,
    seed: Option<Spanned<i64>>,
    date: Option<Spanned<String>>,
    design: Option<Spanned<String>>,
    axial: Option<Spanned<toml::Value>>,
}

/// What a plan file asks for.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanFile {
    /// The factors, responses and counts.
    pub request: PlanRequest,
    /// The response-surface plan, when the file names a design.
    pub surface: Option<SurfaceChoice>,
    /// Whether the file gives `centre_points` (a response-surface plan gets
    /// some when it does not).
    pub centre_points_given: bool,
}

/// The 1-based line of byte `offset` in `text`.
pub(crate) fn line_of(text: &str, offset: usize) -> usize {
    text[..offset.min(text.len())]
        .bytes()
        .filter(|byte| *byte == b'\n')
        .count()
        + 1
}

/// Where each line of a text starts, so that the line of many offsets costs
/// a binary search each rather than a count from the start (a settings file
/// of 100,000 keys would otherwise cost time in the square of its size).
pub(crate) struct LineStarts {
    newlines: Vec<usize>,
}

impl LineStarts {
    pub(crate) fn new(text: &str) -> Self {
        Self {
            newlines: text
                .bytes()
                .enumerate()
                .filter(|(_, byte)| *byte == b'\n')
                .map(|(at, _)| at)
                .collect(),
        }
    }

    /// The 1-based line of byte `offset`, as [`line_of`].
    pub(crate) fn line(&self, offset: usize) -> usize {
        self.newlines.partition_point(|newline| *newline < offset) + 1
    }
}

/// Reads a plan request from TOML text; `file` names it in messages.
///
/// # Errors
///
/// [`PlanFileError`] naming the key and line of the first problem.
pub fn parse_plan_file(text: &str, file: &str) -> Result<PlanFile, PlanFileError> {
    let raw: RawPlanFile = toml::from_str(text).map_err(|error| PlanFileError::Syntax {
        file: file.to_string(),
        message: match error.span() {
            Some(span) => format!("line {}: {}", line_of(text, span.start), error.message().trim()),
            None => error.message().trim().to_string(),
        },
    })?;
    let bad = |span: std::ops::Range<usize>, key: &str, rule: &str| PlanFileError::BadValue {
        file: file.to_string(),
        line: line_of(text, span.start),
        key: key.to_string(),
        rule: rule.to_string(),
    };
    let count = |value: &Option<Spanned<i64>>, key: &str, least: i64| -> Result<usize, PlanFileError> {
        match value {
            None => Ok(0),
            Some(spanned) if *spanned.get_ref() >= least => Ok(*spanned.get_ref() as usize),
            Some(spanned) => Err(bad(
                spanned.span(),
                key,
                &format!("must be a whole number, at least {least}"),
            )),
        }
    };
    let mut factors = Vec::new();
    let mut limits = Vec::new();
    for raw_factor in &raw.factor {
        let mut levels = Vec::new();
        for level in raw_factor.levels.get_ref() {
            let text = match level.get_ref() {
                toml::Value::String(text) => text.clone(),
                toml::Value::Integer(number) => number.to_string(),
                toml::Value::Float(number) if number.is_finite() => format!("{number}"),
                _ => return Err(bad(level.span(), "levels", "must hold numbers or text")),
            };
            levels.push(Level::new(&text));
        }
        if levels.len() < 2 {
            return Err(bad(raw_factor.levels.span(), "levels", "needs at least two levels"));
        }
        let name = raw_factor.name.get_ref().trim().to_string();
        let limit = |value: &Option<Spanned<toml::Value>>, key: &str| match value {
            None => Ok(None),
            Some(spanned) => match spanned.get_ref() {
                toml::Value::Integer(number) => Ok(Some(*number as f64)),
                toml::Value::Float(number) if number.is_finite() => Ok(Some(*number)),
                _ => Err(bad(
                    spanned.span(),
                    key,
                    "must be a number, a setting the process can reach",
                )),
            },
        };
        let lowest = limit(&raw_factor.lowest, "lowest")?;
        let highest = limit(&raw_factor.highest, "highest")?;
        if let (Some(low), Some(high), Some(at)) = (lowest, highest, raw_factor.highest.as_ref()) {
            if low >= high {
                return Err(bad(at.span(), "highest", "must be above 'lowest'"));
            }
        }
        if lowest.is_some() || highest.is_some() {
            limits.push((
                FactorLimits {
                    factor: name.clone(),
                    lower: lowest,
                    upper: highest,
                },
                raw_factor
                    .lowest
                    .as_ref()
                    .or(raw_factor.highest.as_ref())
                    .map(Spanned::span),
            ));
        }
        factors.push(FactorSpec { name, levels });
    }
    let responses = match raw.response {
        None => Vec::new(),
        Some(OneOrMany::One(name)) => vec![name],
        Some(OneOrMany::Many(names)) => names,
    };
    let seed = match &raw.seed {
        None => None,
        Some(spanned) if *spanned.get_ref() >= 0 => Some(*spanned.get_ref() as u64),
        Some(spanned) => return Err(bad(spanned.span(), "seed", "must be a whole number, at least 0")),
    };
    let fraction_runs = match count(&raw.runs, "runs", 2)? {
        0 => None,
        runs => Some(runs),
    };
    let axial = match &raw.axial {
        None => None,
        Some(spanned) => {
            let words = match spanned.get_ref() {
                toml::Value::String(text) => text.clone(),
                toml::Value::Integer(number) => number.to_string(),
                toml::Value::Float(number) => format!("{number}"),
                _ => String::new(),
            };
            Some(
                read_axial(&words)
                    .map_err(|_| bad(spanned.span(), "axial", AXIAL_RULE))
                    .map(|axial| (axial, spanned.span()))?,
            )
        }
    };
    let surface = match &raw.design {
        None => {
            if let Some((_, span)) = axial {
                return Err(bad(span, "axial", "goes with design = \"central-composite\""));
            }
            if let Some((_, Some(span))) = limits.first() {
                return Err(bad(
                    span.clone(),
                    "lowest",
                    "and 'highest' go with a response-surface plan: add design = \"central-composite\" or \"box-behnken\"",
                ));
            }
            None
        }
        Some(design) => Some(SurfaceChoice {
            design: read_design(design.get_ref(), axial.as_ref().map(|(axial, _)| *axial)).map_err(|error| {
                match (&error, &axial) {
                    (super::surface_choice::SurfaceWordsError::AxialForBoxBehnken, Some((_, span))) => {
                        bad(span.clone(), "axial", &error.to_string())
                    }
                    _ => bad(
                        design.span(),
                        "design",
                        "must be \"central-composite\" or \"box-behnken\"",
                    ),
                }
            })?,
            limits: limits.into_iter().map(|(limit, _)| limit).collect(),
        }),
    };
    let centre_points_given = raw.centre_points.is_some();
    let request = PlanRequest {
        factors,
        responses,
        replicates: count(&raw.replicates, "replicates", 1)?,
        centre_points: count(&raw.centre_points, "centre_points", 0)?,
        blocks: count(&raw.blocks, "blocks", 1)?,
        fraction_runs,
        generators: raw.generators,
        seed,
        date: raw.date.map(Spanned::into_inner),
    };
    Ok(PlanFile {
        request,
        surface,
        centre_points_given,
    })
}

/// What the `axial` key accepts.
const AXIAL_RULE: &str =
    "must be \"rotatable\", \"orthogonal-blocks\", \"faces\" or a positive distance in coded units, such as 1.5";

#[cfg(test)]
mod line_tests {
    use super::*;

    #[test]
    fn line_starts_agree_with_counting() {
        let text = "a = 1\n\nb = 2\r\nc = [\n 3]\n";
        let starts = LineStarts::new(text);
        for offset in 0..=text.len() + 2 {
            assert_eq!(starts.line(offset), line_of(text, offset), "offset {offset}");
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_a_plan_file() {
        let text = r#"
response = "Yield (%)"
replicates = 2
seed = 42

[[factor]]
name = "Temperature"
levels = [160, 180.5]

[[factor]]
name = "Supplier"
levels = ["North", "South", "East"]
"#;
        let request = parse_plan_file(text, "plan.toml").expect("valid").request;
        assert_eq!(request.responses, vec!["Yield (%)"]);
        assert_eq!(request.replicates, 2);
        assert_eq!(request.seed, Some(42));
        assert_eq!(request.factors[0].levels[1].number, Some(180.5));
        assert_eq!(request.factors[1].levels[2].text, "East");
    }

    #[test]
    fn errors_name_key_and_line() {
        let text = "response = \"Y\"\nreplicates = 0\n";
        let error = parse_plan_file(text, "plan.toml").expect_err("zero replicates");
        assert_eq!(
            error.to_string(),
            "plan.toml, line 2: 'replicates' must be a whole number, at least 1"
        );
        let text = "response = \"Y\"\n\n[[factor]]\nname = \"A\"\nlevels = [1, true]\n";
        let error = parse_plan_file(text, "plan.toml").expect_err("boolean level");
        assert!(error.to_string().contains("line 5: 'levels'"), "{error}");
        let text = "response = \"Y\"\ncolour = \"blue\"\n";
        let error = parse_plan_file(text, "plan.toml").expect_err("unknown key");
        let message = error.to_string();
        assert!(message.contains("line 2") && message.contains("colour"), "{message}");
    }
}
