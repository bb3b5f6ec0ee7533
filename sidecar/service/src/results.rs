//! The results types: what one analysis found, as plain values that the
//! report builder lays out as a workbook and serde turns into the JSON
//! results document (see `sidecar/docs/results-format.md`).

use serde::ser::{SerializeStruct, Serializer};
use serde::Serialize;
use workbook_io::layout::{Finding, Layout};
use workbook_io::SheetInfo;

use crate::settings::Settings;
use engine::analysis::oneway::OneWayFit;

/// Version of the results document (JSON and workbook); bumped on any
/// incompatible change to field names or meaning.
pub const RESULTS_FORMAT_VERSION: &str = "1.4";

/// The tool's name and version, as recorded in every result.
pub const TOOL_NAME: &str = "trialyst";

/// The tool's version.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// Where the analysed data came from.
#[derive(Debug, Clone, Serialize)]
pub struct SourceInfo {
    /// The path as given.
    pub path: String,
    /// The file name alone.
    pub file_name: String,
    /// SHA-256 of the file's bytes, hex.
    pub sha256: String,
    /// Size in bytes.
    pub bytes: u64,
    /// Format found in the bytes.
    pub format: String,
    /// Sheet analysed.
    pub sheet: String,
    /// Range analysed (header row through last data row).
    pub range: String,
}

/// What the table detection found.
#[derive(Debug, Clone, Serialize)]
pub struct TableSummary {
    /// Sheet of the table.
    pub sheet: String,
    /// Its range.
    pub range: String,
    /// Long or wide.
    pub layout: Layout,
    /// Factors with their levels.
    pub factors: Vec<FactorSummary>,
    /// Response names.
    pub responses: Vec<String>,
    /// Number of records.
    pub n_records: usize,
    /// Each choice table detection made (which table, which columns), in one line with
    /// the setting that would change it.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub choices: Vec<String>,
}

/// A factor and its levels.
#[derive(Debug, Clone, Serialize)]
pub struct FactorSummary {
    /// Header text.
    pub name: String,
    /// Column letter, in the long layout.
    pub column: Option<String>,
    /// Levels, in order of first appearance.
    pub levels: Vec<String>,
    /// True for a blocking factor.
    pub is_block: bool,
}

/// The outcome for one response.
#[derive(Debug, Clone, Serialize)]
#[serde(tag = "status", rename_all = "kebab-case")]
pub enum ResponseOutcome {
    /// The one-way model was fitted.
    Analysed {
        /// The fit.
        one_way: Box<OneWayFit>,
    },
    /// The response could not be analysed.
    NotAnalysed {
        /// Why, in a sentence.
        reason: String,
    },
}

/// One response's analysis.
#[derive(Debug, Clone, Serialize)]
pub struct ResponseResult {
    /// The response's header text.
    pub name: String,
    /// Unit, taken from a parenthesis or bracket at the end of the header, if any.
    pub unit: Option<String>,
    /// What defines a condition: the factor name, or the factors joined by " × ".
    pub condition_factor: String,
    /// Simultaneous comparisons, model checks and the lead analysis, when analysed.
    pub assessment: Option<Box<engine::analysis::assessment::Assessment>>,
    /// The plain-language reading, when analysed.
    pub verdict: Option<engine::analysis::verdict::Verdict>,
    /// The factorial analysis, when the table has two or more treatment factors (or blocks).
    pub factorial: Option<engine::analysis::factorial::FactorialOutcome>,
    /// Which analysis leads (gives `verdict`, the headline and the roll-up row), and why.
    pub lead: LeadChoice,
    /// The reading of the factorial outcome, when the factorial model leads.
    pub factorial_reading: Option<engine::analysis::verdict::FactorialReading>,
    /// The one-way comparison of all combinations, read as a detail, when the
    /// factorial model leads (otherwise `verdict` is this reading).
    pub one_way_verdict: Option<engine::analysis::verdict::Verdict>,
    /// What to run next after a two-level screen, and why, in one sentence: a
    /// fold-over, the path of steepest ascent or descent, runs completing a central
    /// composite plan, or more replicates. Present only when the factorial analysis
    /// read a two-level design whose factor settings are numbers.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub next_trial: Option<String>,
    /// After a response-surface trial (every treatment factor numeric with three or
    /// five settings and centre runs, as a central composite or Box-Behnken plan
    /// has): the second-order fit's stationary point and its kind, in one sentence.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub second_order: Option<String>,
    /// The second-order analysis itself (coefficients, ANOVA parts, lack of fit,
    /// stationary point and canonical analysis, ridge path, the recommended settings'
    /// prediction), when `second_order` is present.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub surface: Option<Box<engine::analysis::surface::SurfaceOutcome>>,
    /// The runs of the recommended next trial, for writing its plan
    /// (`service::plan::next`); not part of the JSON document.
    #[serde(skip)]
    pub next_runs: Option<crate::plan::next::NextRuns>,
    /// The outcome.
    #[serde(flatten)]
    pub outcome: ResponseOutcome,
}

impl ResponseResult {
    /// The fit, when the response was analysed.
    pub fn fit(&self) -> Option<&OneWayFit> {
        match &self.outcome {
            ResponseOutcome::Analysed { one_way } => Some(one_way),
            ResponseOutcome::NotAnalysed { .. } => None,
        }
    }
}

/// The analysis that leads a response's reading.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum LeadKind {
    /// The factorial model: effects of the factors and their interactions.
    Factorial,
    /// The one-way comparison of the conditions.
    OneWay,
    /// The second-order (response-surface) model of a composite or Box-Behnken trial.
    SecondOrder,
}

/// The lead analysis of a response and the reason, in one plain sentence.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LeadChoice {
    /// Which analysis leads.
    pub analysis: LeadKind,
    /// Why, in one sentence.
    pub reason: String,
}

/// Time spent per stage, in milliseconds.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Timings {
    /// Hashing the source file.
    pub hash_ms: f64,
    /// Opening and reading cells.
    pub read_ms: f64,
    /// Table detection.
    pub layout_ms: f64,
    /// Statistics (the one-way fits and everything after them).
    pub analysis_ms: f64,
    /// Of `analysis_ms`, the comparisons and model checks beyond the one-way fit
    /// (multiple comparisons, spreads, normality, outliers, rank-based analysis).
    pub assessment_ms: f64,
}

/// Everything found for one workbook.
///
/// Serialised with one field more than it holds: `beyond_range`, the JSON Pointers of the
/// figures written as `null` because they lie beyond the range of the arithmetic (see
/// [`crate::beyond_range`]).
#[derive(Debug, Clone)]
pub struct WorkbookResults {
    /// Version of this document's format.
    pub format_version: &'static str,
    /// Tool name.
    pub tool: &'static str,
    /// Tool version.
    pub tool_version: &'static str,
    /// When the analysis ran, RFC 3339 UTC.
    pub created_at: String,
    /// The source.
    pub source: SourceInfo,
    /// The table.
    pub table: TableSummary,
    /// The settings in force after layering.
    pub settings: Settings,
    /// Where each setting in force came from, by key.
    pub settings_sources: Vec<(String, String)>,
    /// One entry per response.
    pub responses: Vec<ResponseResult>,
    /// The compromise over several responses with goals (response-surface trials).
    pub compromise: Option<crate::compromise::CompromiseResult>,
    /// Data findings, each with its place.
    pub findings: Vec<Finding>,
    /// Cautions that go with every result.
    pub cautions: Vec<String>,
    /// Time per stage.
    pub timings: Timings,
}

impl WorkbookResults {
    /// The document's fields, in their order, without `beyond_range`.
    fn write_fields<M: SerializeStruct>(&self, map: &mut M) -> Result<(), M::Error> {
        // Taken apart so that a field added to the struct cannot be left out here.
        let WorkbookResults {
            format_version,
            tool,
            tool_version,
            created_at,
            source,
            table,
            settings,
            settings_sources,
            responses,
            compromise,
            findings,
            cautions,
            timings,
        } = self;
        map.serialize_field("format_version", format_version)?;
        map.serialize_field("tool", tool)?;
        map.serialize_field("tool_version", tool_version)?;
        map.serialize_field("created_at", created_at)?;
        map.serialize_field("source", source)?;
        map.serialize_field("table", table)?;
        map.serialize_field("settings", settings)?;
        map.serialize_field("settings_sources", settings_sources)?;
        map.serialize_field("responses", responses)?;
        match compromise {
            Some(found) => map.serialize_field("compromise", found)?,
            None => map.skip_field("compromise")?,
        }
        map.serialize_field("findings", findings)?;
        map.serialize_field("cautions", cautions)?;
        map.serialize_field("timings", timings)
    }
}

/// The document without its `beyond_range` list: what the list is found in.
struct WithoutBeyondRange<'a>(&'a WorkbookResults);

impl Serialize for WithoutBeyondRange<'_> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let mut map = serializer.serialize_struct("WorkbookResults", 13)?;
        self.0.write_fields(&mut map)?;
        map.end()
    }
}

impl Serialize for WorkbookResults {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        let beyond_range = crate::beyond_range::infinite_figures(&WithoutBeyondRange(self));
        let mut map = serializer.serialize_struct("WorkbookResults", 14)?;
        self.write_fields(&mut map)?;
        map.serialize_field("beyond_range", &beyond_range)?;
        map.end()
    }
}

/// The standing cautions printed with every result.
pub fn standard_cautions() -> Vec<String> {
    vec![
        "A statistical result does not by itself approve a process change. Follow your site's change-control, validation and safety procedures, applicable codes and licensed practice, especially for safety-critical products.".into(),
        "The intervals and p-values assume independent runs; they say nothing about conditions or ranges that were not tried.".into(),
    ]
}

/// What `inspect` reports: the detected table and every finding, no analysis.
#[derive(Debug, Clone, Serialize)]
pub struct Inspection {
    /// The source.
    pub source: SourceInfo,
    /// The worksheets.
    pub sheets: Vec<SheetInfo>,
    /// The table found.
    pub table: TableSummary,
    /// The settings in force.
    pub settings: Settings,
    /// Findings.
    pub findings: Vec<Finding>,
}

/// The current time, RFC 3339 in UTC.
pub fn now_rfc3339() -> String {
    time::OffsetDateTime::now_utc()
        .format(&time::format_description::well_known::Rfc3339)
        .unwrap_or_default()
}
