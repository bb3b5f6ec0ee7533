//! Per-response goals for several responses at once: the `goal` setting.
//!
//! One entry names a response and says what is wanted of it, with the limits
//! of what is acceptable and, optionally, a weight and an importance:
//!
//! ```text
//! Peel strength (N): higher, acceptable 38 to 45
//! Haze (%): lower, acceptable 0.8 to 2.5, weight 2
//! Thickness (mm): target 2.5, acceptable 2.3 to 2.8, importance 3
//! ```
//!
//! `higher`: below the first limit unacceptable, from the second on fully
//! desirable. `lower`: up to the first limit fully desirable, above the second
//! unacceptable. `target T`: acceptable between the limits, best at T. The weight
//! shapes the desirability between the limits (1 a straight line, above 1 it
//! asks for more, below 1 less); the importance counts a response more in the
//! overall desirability (default 1 for both). Several entries in one value are
//! separated by `;` or line breaks; repeated `goal` rows add up, and a later
//! entry for the same response replaces the earlier one.

use engine::analysis::desirability::{Goal, ResponseGoal};
use serde::{Deserialize, Serialize};

use crate::settings::names_response;

/// What is wanted of one response.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GoalKind {
    /// Higher is better.
    Higher,
    /// Lower is better.
    Lower,
    /// Nearest the target is best.
    Target,
}

/// One response's goal as written in the settings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GoalSetting {
    /// The response's header, as written (compared like directions: without
    /// regard to case, with or without the unit at its end).
    pub response: String,
    /// Higher, lower or target.
    pub kind: GoalKind,
    /// The first acceptable limit (the lower one).
    pub low: f64,
    /// The second acceptable limit (the upper one).
    pub high: f64,
    /// The target, for a target goal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub target: Option<f64>,
    /// Shape of the desirability between the limits (default 1).
    pub weight: f64,
    /// Importance in the overall desirability (default 1).
    pub importance: f64,
}

impl GoalSetting {
    /// The engine's form of the goal.
    pub fn to_engine(&self) -> ResponseGoal {
        let goal = match self.kind {
            GoalKind::Higher => Goal::Higher {
                low: self.low,
                high: self.high,
            },
            GoalKind::Lower => Goal::Lower {
                low: self.low,
                high: self.high,
            },
            GoalKind::Target => Goal::Target {
                low: self.low,
                target: self.target.unwrap_or(0.5 * (self.low + self.high)),
                high: self.high,
            },
        };
        ResponseGoal {
            goal,
            weight: self.weight,
            importance: self.importance,
        }
    }

    /// The goal in words, as it could be written back in the settings.
    pub fn describe(&self) -> String {
        let what = match (self.kind, self.target) {
            (GoalKind::Higher, _) => "higher".to_string(),
            (GoalKind::Lower, _) => "lower".to_string(),
            (GoalKind::Target, target) => format!("target {}", target.unwrap_or(f64::NAN)),
        };
        let mut text = format!("{what}, acceptable {} to {}", self.low, self.high);
        if self.weight != 1.0 {
            text.push_str(&format!(", weight {}", self.weight));
        }
        if self.importance != 1.0 {
            text.push_str(&format!(", importance {}", self.importance));
        }
        text
    }
}

/// What the `goal` setting accepts, for messages.
pub const GOAL_FORMS: &str = "per response, its name, a colon and its goal: higher, lower or target followed by a number, then 'acceptable' and two limits joined by 'to', optionally 'weight' and 'importance' with a positive number each (Peel strength (N): higher, acceptable 38 to 45, weight 2); several separated by ;";

fn positive(word: &str, text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(number) if number.is_finite() && number > 0.0 => Ok(number),
        _ => Err(format!("the {word} must be a positive number, not '{}'", text.trim())),
    }
}

fn finite(what: &str, text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(number) if number.is_finite() => Ok(number),
        _ => Err(format!("{what} must be a number, not '{}'", text.trim())),
    }
}

/// Reads one entry: `name: goal, acceptable L to U[, weight W][, importance R]`.
///
/// # Errors
///
/// What is wrong with the entry, in words.
pub fn parse_goal(entry: &str) -> Result<GoalSetting, String> {
    let entry = entry.trim();
    let Some(at) = entry.rfind([':', '=']) else {
        return Err(format!(
            "'{entry}' names no response: write the response's name, a colon, then its goal"
        ));
    };
    let (name, rest) = (entry[..at].trim(), &entry[at + 1..]);
    if name.is_empty() {
        return Err(format!("'{entry}' names no response before the colon"));
    }
    let mut parts = rest.split(',').map(str::trim).filter(|part| !part.is_empty());
    let head = parts.next().unwrap_or("").to_lowercase();
    let words: Vec<&str> = head.split_whitespace().collect();
    let (kind, target) = match words.as_slice() {
        ["higher"] | ["maximise"] | ["maximize"] => (GoalKind::Higher, None),
        ["lower"] | ["minimise"] | ["minimize"] => (GoalKind::Lower, None),
        ["target", number] => (GoalKind::Target, Some(finite("the target", number)?)),
        _ => {
            return Err(format!(
                "the goal for '{name}' must start with higher, lower or target and a number, not '{head}'"
            ))
        }
    };
    let (mut limits, mut weight, mut importance) = (None, 1.0, 1.0);
    for part in parts {
        let lower = part.to_lowercase();
        let (word, value) = lower.split_once(char::is_whitespace).unwrap_or((lower.as_str(), ""));
        match word {
            "acceptable" | "limits" => {
                let Some((low, high)) = value.split_once(" to ") else {
                    return Err(format!(
                        "the acceptable limits for '{name}' must be two numbers joined by 'to', not '{}'",
                        value.trim()
                    ));
                };
                limits = Some((finite("the first limit", low)?, finite("the second limit", high)?));
            }
            "weight" => weight = positive("weight", value)?,
            "importance" => importance = positive("importance", value)?,
            _ => {
                return Err(format!(
                    "'{part}' in the goal for '{name}' is not understood (use acceptable, weight or importance)"
                ))
            }
        }
    }
    let Some((low, high)) = limits else {
        return Err(format!(
            "the goal for '{name}' needs its acceptable limits (acceptable 38 to 45)"
        ));
    };
    if low >= high {
        return Err(format!("the acceptable limits for '{name}' must rise: {low} to {high}"));
    }
    if let Some(target) = target {
        if !(low < target && target < high) {
            return Err(format!(
                "the target {target} for '{name}' must lie between its limits {low} and {high}"
            ));
        }
    }
    Ok(GoalSetting {
        response: name.to_string(),
        kind,
        low,
        high,
        target,
        weight,
        importance,
    })
}

/// Reads a `goal` value: one or more entries separated by `;` or line breaks.
///
/// # Errors
///
/// What is wrong with the first entry that could not be read.
pub fn parse_goal_entries(value: &str) -> Result<Vec<GoalSetting>, String> {
    value
        .split([';', '\n'])
        .map(str::trim)
        .filter(|part| !part.is_empty())
        .map(parse_goal)
        .collect()
}

/// Adds goals to a list: a later goal for a response replaces its earlier one.
pub fn add_goals(goals: &mut Vec<GoalSetting>, entries: Vec<GoalSetting>) {
    for entry in entries {
        goals.retain(|earlier| !names_response(&earlier.response, &entry.response));
        goals.push(entry);
    }
}

/// Layers goals: those of the higher source win; a lower source's goals stand for
/// responses the higher one does not name.
pub fn layer_goals(high: &[GoalSetting], low: &[GoalSetting]) -> Vec<GoalSetting> {
    let mut merged = high.to_vec();
    for entry in low {
        if !merged.iter().any(|own| names_response(&own.response, &entry.response)) {
            merged.push(entry.clone());
        }
    }
    merged
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn entries_read_with_their_limits_weight_and_importance() {
        let goals = parse_goal_entries(
            "Peel strength (N): higher, acceptable 38 to 45; Haze (%): lower, acceptable 0.8 to 2.5, weight 2\nThickness = target 2.5, limits 2.3 to 2.8, importance 3",
        )
        .expect("valid");
        assert_eq!(goals.len(), 3);
        assert_eq!(goals[0].response, "Peel strength (N)");
        assert_eq!(
            (goals[0].kind, goals[0].low, goals[0].high),
            (GoalKind::Higher, 38.0, 45.0)
        );
        assert_eq!((goals[1].kind, goals[1].weight), (GoalKind::Lower, 2.0));
        assert_eq!(goals[2].target, Some(2.5));
        assert_eq!(goals[2].importance, 3.0);
        assert_eq!(goals[2].describe(), "target 2.5, acceptable 2.3 to 2.8, importance 3");
        // The engine's desirability at a point between the limits (Derringer and Suich
        // 1980, by arithmetic): higher, (41.5 - 38) / (45 - 38) = 0.5.
        assert_eq!(goals[0].to_engine().desirability(41.5), 0.5);
        // Lower with weight 2: ((2.5 - 1.65) / (2.5 - 0.8))² = 0.25.
        assert!((goals[1].to_engine().desirability(1.65) - 0.25).abs() < 1e-12);
    }

    #[test]
    fn bad_entries_say_what_is_wrong() {
        let cases = [
            ("higher, acceptable 1 to 2", "names no response"),
            ("Gloss: sideways, acceptable 1 to 2", "must start with higher"),
            ("Gloss: higher", "needs its acceptable limits"),
            ("Gloss: higher, acceptable 5 to 2", "must rise"),
            ("Gloss: higher, acceptable 1 and 2", "joined by 'to'"),
            ("Gloss: target 9, acceptable 1 to 2", "between its limits"),
            ("Gloss: higher, acceptable 1 to 2, weight -1", "positive number"),
            ("Gloss: higher, acceptable 1 to 2, colour red", "not understood"),
        ];
        for (text, expected) in cases {
            let message = parse_goal(text).unwrap_err();
            assert!(message.contains(expected), "{text}: {message}");
        }
    }

    #[test]
    fn later_goals_replace_earlier_ones_and_higher_sources_win() {
        let mut goals = parse_goal_entries("Gloss: higher, acceptable 1 to 2").expect("valid");
        add_goals(
            &mut goals,
            parse_goal_entries("gloss: lower, acceptable 1 to 2").expect("valid"),
        );
        assert_eq!(goals.len(), 1);
        assert_eq!(goals[0].kind, GoalKind::Lower);
        let low =
            parse_goal_entries("Gloss: higher, acceptable 1 to 2; Haze: lower, acceptable 0 to 1").expect("valid");
        let merged = layer_goals(&goals, &low);
        assert_eq!(merged.len(), 2);
        assert_eq!(merged[0].kind, GoalKind::Lower);
        assert_eq!(merged[1].response, "Haze");
    }

    #[test]
    fn the_folder_file_takes_goals_as_a_list_or_a_table() {
        let listed = crate::folder_settings::parse_folder_settings(
            "goal = [\"Yield (%): higher, acceptable 60 to 85\", \"Cost: lower, acceptable 4 to 9\"]\n",
            "trialyst.toml",
        )
        .expect("valid");
        assert_eq!(listed.goals.len(), 2);
        let table = crate::folder_settings::parse_folder_settings(
            "confidence = 0.9\ngoal = { Cost = \"lower, acceptable 4 to 9, importance 2\" }\n",
            "trialyst.toml",
        )
        .expect("valid");
        assert_eq!(table.goals[0].importance, 2.0);
        let error = crate::folder_settings::parse_folder_settings(
            "confidence = 0.9\ngoal = \"Cost: lower\"\n",
            "trialyst.toml",
        )
        .unwrap_err()
        .to_string();
        assert!(
            error.contains("trialyst.toml, line 2") && error.contains("acceptable limits"),
            "{error}"
        );
    }
}
