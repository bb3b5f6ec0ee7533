//! Analysis settings: what the user can set, where it can be set, and which
//! source wins.
//!
//! Settings arrive raw, as key/value text (the settings sheet of a workbook,
//! a folder settings file) or already typed (the command line, the protocol).
//! [`Settings::from_pairs`] checks the raw form into the typed one; sources
//! are then layered with [`Settings::over`]: command line, then the
//! workbook's settings sheet, then the folder file, then the built-in
//! defaults.

use serde::Serialize;
use workbook_io::layout::Layout;

pub use engine::options::{Direction, DEFAULT_CONFIDENCE};

/// Every setting, each optional so that sources can be layered.
#[derive(Debug, Clone, Default, PartialEq, Serialize, serde::Deserialize)]
#[serde(default)]
pub struct Settings {
    /// Sheet holding the trial table.
    pub sheet: Option<String>,
    /// A1 range, defined name or table name of the trial table.
    pub range: Option<String>,
    /// Response column headers.
    pub responses: Vec<String>,
    /// Factor column headers.
    pub factors: Vec<String>,
    /// Blocking column headers.
    pub blocks: Vec<String>,
    /// Forced layout.
    pub layout: Option<Layout>,
    /// Name for the response of a wide table.
    pub value_name: Option<String>,
    /// Confidence level of intervals.
    pub confidence: Option<f64>,
    /// Family confidence of simultaneous intervals (default: the confidence).
    pub family_confidence: Option<f64>,
    /// Linear combinations of condition means, in the contrast syntax.
    pub contrasts: Vec<String>,
    /// Which way is better, for every response not named in `response_directions`.
    pub direction: Option<Direction>,
    /// Which way is better for named responses (`direction` rows such as
    /// `Leak rate: lower`); these win over `direction` from the same source.
    pub response_directions: Vec<ResponseDirection>,
    /// The control condition for comparisons with a control.
    pub control: Option<String>,
    /// Folder for results files.
    pub out_dir: Option<String>,
    /// Highest order of interaction in a factorial model (1 = main effects only);
    /// `None` fits every order the replication allows.
    pub interaction_order: Option<usize>,
    /// The identifier of the trial plan the workbook was written from; when
    /// set, the runs are checked against the plan kept in the workbook.
    pub plan_id: Option<String>,
    /// The seed the plan's run order was drawn from (a record for people;
    /// the check reads the plan itself).
    pub plan_seed: Option<u64>,
    /// The number of runs in the plan.
    pub plan_runs: Option<usize>,
    /// The block holding confirmation runs (written by the next plan): left out of
    /// the second-order fit and judged against the interval predicted for them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub confirmation_block: Option<usize>,
    /// Per-response goals for several responses at once (`goal` rows such as
    /// `Peel strength (N): higher, acceptable 38 to 45`).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub goals: Vec<crate::goals::GoalSetting>,
}

/// The direction of one named response.
#[derive(Debug, Clone, PartialEq, Serialize, serde::Deserialize)]
pub struct ResponseDirection {
    /// The response's header, as written by the user (compared without regard to
    /// case, and with or without the unit in brackets at its end).
    pub response: String,
    /// Which way is better for it.
    pub direction: Direction,
}

/// What a `direction` value holds: one direction for every response, or a direction
/// for a named response.
#[derive(Debug, Clone, PartialEq)]
pub enum DirectionEntry {
    /// `lower`: every response.
    All(Direction),
    /// `Leak rate: lower` (or `Leak rate = lower`): one response.
    Response(ResponseDirection),
}

/// Reads a `direction` value: one or more entries separated by `;` or line breaks, each
/// a direction (`higher`, `lower`, `target 12.5`) for every response, or a response's
/// name, `:` or `=`, and its direction (`Leak rate: lower`).
///
/// Returns the entries, or the first entry that could not be read.
pub fn parse_direction_entries(value: &str) -> Result<Vec<DirectionEntry>, String> {
    let mut entries = Vec::new();
    for part in value.split([';', '\n']).map(str::trim).filter(|part| !part.is_empty()) {
        if let Some(direction) = parse_direction(part) {
            entries.push(DirectionEntry::All(direction));
            continue;
        }
        let split = part.rfind([':', '=']).map(|at| (&part[..at], &part[at + 1..]));
        match split {
            Some((name, direction_text)) if !name.trim().is_empty() => match parse_direction(direction_text) {
                Some(direction) => entries.push(DirectionEntry::Response(ResponseDirection {
                    response: name.trim().to_string(),
                    direction,
                })),
                None => return Err(part.to_string()),
            },
            _ => return Err(part.to_string()),
        }
    }
    Ok(entries)
}

/// A response header without the unit in brackets at its end, trimmed and in lower case.
fn response_key(name: &str) -> String {
    let trimmed = name.trim();
    let without_unit = match crate::orchestrate::unit_of(trimmed) {
        Some(_) => trimmed
            .rfind(['(', '['])
            .map_or(trimmed, |start| trimmed[..start].trim_end()),
        None => trimmed,
    };
    without_unit.to_lowercase()
}

/// Whether a name written in the settings means the response with this header: the
/// same text without regard to case, with or without the unit at its end.
pub fn names_response(written: &str, header: &str) -> bool {
    written.trim().eq_ignore_ascii_case(header.trim()) || response_key(written) == response_key(header)
}

/// A settings value that could not be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SettingsError {
    /// The key is not one of ours.
    #[error("{place}: unknown setting '{key}' (known: {known})")]
    UnknownKey {
        /// Where it was written.
        place: String,
        /// The key.
        key: String,
        /// The keys we know.
        known: String,
    },
    /// The value does not fit the key.
    #[error("{place}: setting '{key}' cannot be '{value}': {rule}")]
    BadValue {
        /// Where it was written.
        place: String,
        /// The key.
        key: String,
        /// The value.
        value: String,
        /// What is accepted.
        rule: String,
    },
}

impl SettingsError {
    /// Where the offending setting was written.
    pub fn place(&self) -> &str {
        match self {
            Self::UnknownKey { place, .. } | Self::BadValue { place, .. } => place,
        }
    }
}

/// The keys accepted in a settings sheet or folder file.
pub const KNOWN_KEYS: &[&str] = &[
    "sheet",
    "range",
    "response",
    "factor",
    "block",
    "layout",
    "value name",
    "confidence",
    "family confidence",
    "contrast",
    "direction",
    "control",
    "output folder",
    "interaction order",
    "plan id",
    "plan seed",
    "plan runs",
    "confirmation block",
    "goal",
];

fn list(value: &str) -> Vec<String> {
    value
        .split(',')
        .map(|item| item.trim().to_string())
        .filter(|item| !item.is_empty())
        .collect()
}

/// Reads a confidence level given as 0.95, 95 or 95%.
///
/// Returns `None` for anything outside (0, 1) after that reading.
pub fn parse_confidence(value: &str) -> Option<f64> {
    const CONFIDENCE_RANGE: std::ops::Range<f64> = 0.5..1.0;
    let text = value.trim();
    let (number_text, percent) = match text.strip_suffix('%') {
        Some(stripped) => (stripped.trim(), true),
        None => (text, false),
    };
    let number: f64 = number_text.parse().ok()?;
    // Three forms only: a fraction (0.95), a bare percentage (95) or a percentage with
    // its sign (95%), each at least 50% and below 100%. A confidence below 50% is a
    // typing slip ("0.5%" meant 95%? 99.5%?), never a level anyone wants.
    let level = if percent || (50.0..100.0).contains(&number) {
        number / 100.0
    } else {
        number
    };
    (CONFIDENCE_RANGE.contains(&level)).then_some(level)
}

/// Said of a contrast, a direction or a control that names no condition or response of
/// the table; front ends treat such a failure as a mistake in the request (the command
/// line's usage error, the protocol's InvalidParams).
pub const NAMES_NOTHING: &str = "names nothing in the table";

/// The forms a confidence level may take, for messages.
pub const CONFIDENCE_FORMS: &str = "a level from 50% up to (not including) 100%, written 0.95, 95 or 95%";

/// Reads a direction: `higher`, `lower`, or `target 12.5`.
pub fn parse_direction(value: &str) -> Option<Direction> {
    let text = value.trim().to_lowercase();
    let words: Vec<&str> = text.split_whitespace().collect();
    match words.as_slice() {
        ["higher", ..] | ["larger", ..] | ["bigger", ..] | ["maximise"] | ["maximize"] => {
            Some(Direction::HigherIsBetter)
        }
        ["lower", ..] | ["smaller", ..] | ["minimise"] | ["minimize"] => Some(Direction::LowerIsBetter),
        ["target", number] | ["target", "of", number] | ["nearest", number] => {
            number.parse().ok().map(Direction::Target)
        }
        _ => None,
    }
}

/// Reads an interaction order: a whole number of at least 1 (`2` for two-factor
/// interactions), or `all` / blank for every order the data allow. The outer `None`
/// means the text could not be read.
pub fn parse_interaction_order(value: &str) -> Option<Option<usize>> {
    let text = value.trim().to_lowercase();
    if text.is_empty() || text == "all" || text == "detect" {
        return Some(None);
    }
    let order: usize = text.parse().ok()?;
    (order >= 1).then_some(Some(order))
}

impl Settings {
    /// Checks raw key/value pairs (with the place each came from) into settings.
    ///
    /// Keys are compared without regard to case, and `_`/`-` count as spaces.
    /// Repeated `contrast` keys add up; other repeated keys: the last wins.
    ///
    /// # Errors
    ///
    /// The first [`SettingsError`]; use [`Settings::from_pairs_lenient`] to
    /// collect every problem and keep the rest.
    pub fn from_pairs<'a>(
        pairs: impl IntoIterator<Item = (&'a str, &'a str, String)>,
    ) -> Result<Settings, SettingsError> {
        let (settings, mut errors) = Self::from_pairs_lenient(pairs);
        if errors.is_empty() {
            Ok(settings)
        } else {
            Err(errors.remove(0))
        }
    }

    /// Like [`Settings::from_pairs`], but keeps going past bad rows.
    pub fn from_pairs_lenient<'a>(
        pairs: impl IntoIterator<Item = (&'a str, &'a str, String)>,
    ) -> (Settings, Vec<SettingsError>) {
        let mut settings = Settings::default();
        let mut errors = Vec::new();
        for (raw_key, value, place) in pairs {
            let key = raw_key.trim().to_lowercase().replace(['_', '-'], " ");
            let value = value.trim();
            let bad = |rule: &str| SettingsError::BadValue {
                place: place.clone(),
                key: key.clone(),
                value: value.to_string(),
                rule: rule.to_string(),
            };
            match key.as_str() {
                "sheet" => settings.sheet = Some(value.to_string()).filter(|text| !text.is_empty()),
                "range" => settings.range = Some(value.to_string()).filter(|text| !text.is_empty()),
                "response" | "responses" => settings.responses = list(value),
                "factor" | "factors" => settings.factors = list(value),
                "block" | "blocks" => settings.blocks = list(value),
                "layout" => match value.to_lowercase().as_str() {
                    "long" => settings.layout = Some(Layout::Long),
                    "wide" => settings.layout = Some(Layout::Wide),
                    "" | "detect" => settings.layout = None,
                    _ => errors.push(bad("use long, wide or detect")),
                },
                "value name" => settings.value_name = Some(value.to_string()).filter(|text| !text.is_empty()),
                "confidence" => match parse_confidence(value) {
                    Some(level) => settings.confidence = Some(level),
                    None => errors.push(bad(CONFIDENCE_FORMS)),
                },
                "family confidence" => match parse_confidence(value) {
                    Some(level) => settings.family_confidence = Some(level),
                    None => errors.push(bad(CONFIDENCE_FORMS)),
                },
                "contrast" | "contrasts" => {
                    if !value.is_empty() {
                        settings.contrasts.push(value.to_string());
                    }
                }
                "direction" | "directions" => match parse_direction_entries(value) {
                    Ok(entries) => settings.add_directions(entries),
                    Err(_) => errors.push(bad(
                        "higher, lower, or target followed by a number; or, per response, the response's name, a colon and its direction (Leak rate: lower), several separated by ;",
                    )),
                },
                "control" => settings.control = Some(value.to_string()).filter(|text| !text.is_empty()),
                "output folder" => settings.out_dir = Some(value.to_string()).filter(|text| !text.is_empty()),
                "interaction order" => match parse_interaction_order(value) {
                    Some(order) => settings.interaction_order = order,
                    None => errors.push(bad("a whole number of at least 1, or all")),
                },
                "plan id" => settings.plan_id = Some(value.to_string()).filter(|text| !text.is_empty()),
                "plan seed" => match value.parse::<u64>() {
                    Ok(seed) => settings.plan_seed = Some(seed),
                    Err(_) => errors.push(bad("a whole number from 0 to 18446744073709551615")),
                },
                "plan runs" => match value.parse::<usize>() {
                    Ok(runs) if runs > 0 => settings.plan_runs = Some(runs),
                    _ => errors.push(bad("a whole number of runs, at least 1")),
                },
                "confirmation block" => match value.parse::<usize>() {
                    Ok(block) if block > 0 => settings.confirmation_block = Some(block),
                    _ => errors.push(bad("the number of the block of confirmation runs, at least 1")),
                },
                "goal" | "goals" => match crate::goals::parse_goal_entries(value) {
                    Ok(entries) => crate::goals::add_goals(&mut settings.goals, entries),
                    Err(problem) => errors.push(bad(&format!("{problem}; {}", crate::goals::GOAL_FORMS))),
                },
                _ => errors.push(SettingsError::UnknownKey {
                    place: place.clone(),
                    key,
                    known: KNOWN_KEYS.join(", "),
                }),
            }
        }
        (settings, errors)
    }

    /// Layers `self` over `lower`: every setting given in `self` wins; lists
    /// given in `self` replace those below.
    pub fn over(self, lower: &Settings) -> Settings {
        fn pick<T: Clone>(high: Option<T>, low: &Option<T>) -> Option<T> {
            high.or_else(|| low.clone())
        }
        fn pick_list(high: Vec<String>, low: &[String]) -> Vec<String> {
            if high.is_empty() {
                low.to_vec()
            } else {
                high
            }
        }
        Settings {
            sheet: pick(self.sheet, &lower.sheet),
            range: pick(self.range, &lower.range),
            responses: pick_list(self.responses, &lower.responses),
            factors: pick_list(self.factors, &lower.factors),
            blocks: pick_list(self.blocks, &lower.blocks),
            layout: pick(self.layout, &lower.layout),
            value_name: pick(self.value_name, &lower.value_name),
            confidence: pick(self.confidence, &lower.confidence),
            family_confidence: pick(self.family_confidence, &lower.family_confidence),
            contrasts: pick_list(self.contrasts, &lower.contrasts),
            response_directions: {
                // A source's own entries win; a lower source's entries stand only where
                // this source gave no direction for every response.
                let mut merged = self.response_directions.clone();
                if self.direction.is_none() {
                    for entry in &lower.response_directions {
                        if !merged.iter().any(|own| names_response(&own.response, &entry.response)) {
                            merged.push(entry.clone());
                        }
                    }
                }
                merged
            },
            direction: pick(self.direction, &lower.direction),
            control: pick(self.control, &lower.control),
            out_dir: pick(self.out_dir, &lower.out_dir),
            interaction_order: pick(self.interaction_order, &lower.interaction_order),
            plan_id: pick(self.plan_id, &lower.plan_id),
            plan_seed: pick(self.plan_seed, &lower.plan_seed),
            plan_runs: pick(self.plan_runs, &lower.plan_runs),
            confirmation_block: pick(self.confirmation_block, &lower.confirmation_block),
            goals: crate::goals::layer_goals(&self.goals, &lower.goals),
        }
    }

    /// Adds directions read by [`parse_direction_entries`]: a direction for every
    /// response replaces the earlier one; a response's own replaces its earlier own.
    pub fn add_directions(&mut self, entries: Vec<DirectionEntry>) {
        for entry in entries {
            match entry {
                DirectionEntry::All(direction) => self.direction = Some(direction),
                DirectionEntry::Response(named) => {
                    self.response_directions
                        .retain(|earlier| !names_response(&earlier.response, &named.response));
                    self.response_directions.push(named);
                }
            }
        }
    }

    /// The direction in force for a response: its own entry, else the direction its
    /// goal gives (a goal "higher" is higher is better, "target 40" is a target of
    /// 40), else the one for every response, else `None`.
    pub fn direction_for(&self, response: &str) -> Option<Direction> {
        self.response_directions
            .iter()
            .find(|entry| names_response(&entry.response, response))
            .map(|entry| entry.direction)
            .or_else(|| {
                self.goals
                    .iter()
                    .find(|goal| names_response(&goal.response, response))
                    .and_then(|goal| match goal.kind {
                        crate::goals::GoalKind::Higher => Some(Direction::HigherIsBetter),
                        crate::goals::GoalKind::Lower => Some(Direction::LowerIsBetter),
                        crate::goals::GoalKind::Target => goal.target.map(Direction::Target),
                    })
            })
            .or(self.direction)
    }

    /// The confidence level in force.
    pub fn confidence_level(&self) -> f64 {
        self.confidence.unwrap_or(DEFAULT_CONFIDENCE)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn pairs(rows: &[(&'static str, &'static str)]) -> Vec<(&'static str, &'static str, String)> {
        rows.iter()
            .enumerate()
            .map(|(index, (key, value))| (*key, *value, format!("row {}", index + 1)))
            .collect()
    }

    #[test]
    fn reads_and_layers() {
        let sheet = Settings::from_pairs(pairs(&[
            ("Confidence", "90%"),
            ("response", "Gloss, Haze"),
            ("contrast", "a - b"),
        ]))
        .expect("valid");
        assert_eq!(sheet.confidence, Some(0.9));
        assert_eq!(sheet.responses, vec!["Gloss", "Haze"]);
        let command_line = Settings {
            confidence: Some(0.99),
            ..Settings::default()
        };
        let merged = command_line.over(&sheet);
        assert_eq!(merged.confidence_level(), 0.99);
        assert_eq!(merged.responses, vec!["Gloss", "Haze"]);
        assert_eq!(Settings::default().confidence_level(), 0.95);
    }

    #[test]
    fn bad_rows_name_key_and_place() {
        let (_, errors) = Settings::from_pairs_lenient(pairs(&[("confidence", "1.5"), ("colour", "blue")]));
        assert_eq!(errors.len(), 2);
        let text = errors[0].to_string();
        assert!(
            text.contains("row 1") && text.contains("confidence") && text.contains("1.5"),
            "{text}"
        );
        assert!(errors[1].to_string().contains("unknown setting 'colour'"));
        assert_eq!(parse_direction("target 12.5"), Some(Direction::Target(12.5)));
        assert_eq!(parse_direction("Lower is better"), Some(Direction::LowerIsBetter));
        assert_eq!(parse_confidence("95"), Some(0.95));
        assert_eq!(parse_confidence("0"), None);
        assert_eq!(parse_confidence("0.95"), Some(0.95));
        assert_eq!(parse_confidence("95%"), Some(0.95));
        assert_eq!(parse_confidence("0.5%"), None);
        assert_eq!(parse_confidence("0.3"), None);
        assert_eq!(parse_confidence("100"), None);
        assert_eq!(parse_interaction_order("2"), Some(Some(2)));
        assert_eq!(parse_interaction_order("All"), Some(None));
        assert_eq!(parse_interaction_order("0"), None);
        let (read, errors) =
            Settings::from_pairs_lenient(pairs(&[("Interaction order", "1"), ("interaction_order", "x")]));
        assert_eq!(read.interaction_order, Some(1));
        assert_eq!(errors.len(), 1);
    }

    #[test]
    fn a_goal_gives_its_response_a_direction() {
        let sheet = Settings::from_pairs(pairs(&[
            ("direction", "lower"),
            ("goal", "Peel strength (N): higher, acceptable 38 to 45"),
            ("goal", "Gloss: target 80, acceptable 70 to 90"),
            ("goal", "Haze (%): higher, acceptable 1 to 4"),
            ("direction", "Haze: lower"),
        ]))
        .expect("valid");
        // A goal says which way is better for its response (as the direction of the
        // desirability it sets); a direction named for the response stands above it,
        // and the one for every response applies to responses with neither.
        assert_eq!(sheet.direction_for("peel strength"), Some(Direction::HigherIsBetter));
        assert_eq!(sheet.direction_for("Gloss"), Some(Direction::Target(80.0)));
        assert_eq!(sheet.direction_for("Haze (%)"), Some(Direction::LowerIsBetter));
        assert_eq!(sheet.direction_for("Yield"), Some(Direction::LowerIsBetter));
    }

    #[test]
    fn directions_per_response_layer_by_source() {
        let sheet = Settings::from_pairs(pairs(&[
            ("direction", "higher"),
            ("direction", "Leak rate: lower"),
            ("Direction", "Thickness (mm) = target 2.5; Strength: higher"),
        ]))
        .expect("valid");
        assert_eq!(sheet.direction, Some(Direction::HigherIsBetter));
        assert_eq!(sheet.direction_for("Leak rate (ccm)"), Some(Direction::LowerIsBetter));
        assert_eq!(sheet.direction_for("thickness (mm)"), Some(Direction::Target(2.5)));
        assert_eq!(sheet.direction_for("Thickness"), Some(Direction::Target(2.5)));
        assert_eq!(sheet.direction_for("Gloss"), Some(Direction::HigherIsBetter));
        // A command line naming one response keeps the sheet's other entries.
        let command_line = Settings::from_pairs(pairs(&[("direction", "Strength=lower")])).expect("valid");
        let merged = command_line.over(&sheet);
        assert_eq!(merged.direction_for("Strength"), Some(Direction::LowerIsBetter));
        assert_eq!(merged.direction_for("Leak rate"), Some(Direction::LowerIsBetter));
        // A command line direction for every response overrides the sheet's named ones.
        let everything = Settings::from_pairs(pairs(&[("direction", "target 7")])).expect("valid");
        let merged = everything.over(&sheet);
        assert_eq!(merged.direction_for("Leak rate"), Some(Direction::Target(7.0)));
        let (_, errors) = Settings::from_pairs_lenient(pairs(&[("direction", "Leak rate: sideways")]));
        assert_eq!(errors.len(), 1);
        assert!(errors[0].to_string().contains("Leak rate: lower"), "{}", errors[0]);
        assert_eq!(Settings::default().direction_for("Gloss"), None);
    }
}
