//! Linear combinations of condition means, written in plain arithmetic.
//!
//! Syntax (one combination; several are separated by `;`):
//!
//! ```text
//! [name:] expression
//! expression := term (("+" | "-") term)*
//! term       := [number ["*"]] atom (("*" | "/") number)*
//! atom       := label | "(" expression ")"
//! label      := a word of letters, digits, "_", "." or "-" inside a word,
//!               or any text in 'single quotes', "double quotes" or [brackets]
//! ```
//!
//! Examples: `new - old`, `(A + B)/2 - C`, `early vs late: 0.5*[Line 1] + 0.5*[Line 2] - [Line 3]`.
//! Labels are matched to condition names exactly first, then without regard to case.

use serde::Serialize;

/// A parsed combination: a name and a coefficient for each condition.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contrast {
    /// The name given, or the expression text.
    pub name: String,
    /// The expression as written.
    pub expression: String,
    /// One coefficient per condition, in the order of the conditions.
    pub coefficients: Vec<f64>,
}

impl Contrast {
    /// True when the coefficients sum to zero (a contrast in the strict sense).
    pub fn is_contrast(&self) -> bool {
        let total: f64 = self.coefficients.iter().sum();
        let scale: f64 = self.coefficients.iter().map(|c| c.abs()).sum::<f64>().max(1.0);
        total.abs() <= 1e-9 * scale
    }
}

/// Why a combination could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ContrastError {
    /// The text does not follow the syntax.
    #[error("contrast '{text}': {problem} at character {position}")]
    Syntax {
        /// The whole text.
        text: String,
        /// What is wrong.
        problem: String,
        /// 1-based character position.
        position: usize,
    },
    /// A label names no condition.
    #[error("contrast '{text}': no condition is called '{label}' (conditions: {available})")]
    UnknownCondition {
        /// The whole text.
        text: String,
        /// The label given.
        label: String,
        /// The condition names.
        available: String,
    },
    /// All coefficients are zero.
    #[error("contrast '{text}': every coefficient is zero")]
    AllZero {
        /// The whole text.
        text: String,
    },
}

/// The deepest nesting of parentheses read; deeper text is refused with a
/// message instead of exhausting the stack (the parser recurses once per level).
pub const MAX_NESTING: usize = 64;

struct Parser<'a> {
    text: &'a str,
    chars: Vec<char>,
    position: usize,
    conditions: &'a [String],
    /// Parentheses open at the current position.
    depth: usize,
}

impl<'a> Parser<'a> {
    fn error(&self, problem: impl Into<String>) -> ContrastError {
        ContrastError::Syntax {
            text: self.text.to_string(),
            problem: problem.into(),
            position: self.position + 1,
        }
    }

    fn skip_spaces(&mut self) {
        while self.position < self.chars.len() && self.chars[self.position].is_whitespace() {
            self.position += 1;
        }
    }

    fn peek(&mut self) -> Option<char> {
        self.skip_spaces();
        self.chars.get(self.position).copied()
    }

    fn number(&mut self) -> Option<f64> {
        self.skip_spaces();
        let start = self.position;
        let mut end = start;
        while end < self.chars.len() && (self.chars[end].is_ascii_digit() || self.chars[end] == '.') {
            end += 1;
        }
        if end < self.chars.len() && (self.chars[end] == 'e' || self.chars[end] == 'E') && end > start {
            let mut exponent_end = end + 1;
            if exponent_end < self.chars.len() && (self.chars[exponent_end] == '+' || self.chars[exponent_end] == '-') {
                exponent_end += 1;
            }
            let digits_start = exponent_end;
            while exponent_end < self.chars.len() && self.chars[exponent_end].is_ascii_digit() {
                exponent_end += 1;
            }
            if exponent_end > digits_start {
                end = exponent_end;
            }
        }
        if end == start {
            return None;
        }
        // A number directly followed by a letter is the start of a label such as `2024a`.
        if end < self.chars.len() && (self.chars[end].is_alphabetic() || self.chars[end] == '_') {
            return None;
        }
        let text: String = self.chars[start..end].iter().collect();
        let value = text.parse::<f64>().ok()?;
        self.position = end;
        Some(value)
    }

    fn label(&mut self) -> Result<String, ContrastError> {
        self.skip_spaces();
        let Some(&first) = self.chars.get(self.position) else {
            return Err(self.error("expected a condition name"));
        };
        let closing = match first {
            '\'' => Some('\''),
            '"' => Some('"'),
            '[' => Some(']'),
            _ => None,
        };
        if let Some(closing) = closing {
            let start = self.position + 1;
            let Some(length) = self.chars[start..].iter().position(|c| *c == closing) else {
                return Err(self.error(format!("no closing {closing}")));
            };
            self.position = start + length + 1;
            return Ok(self.chars[start..start + length].iter().collect());
        }
        let start = self.position;
        while self.position < self.chars.len() {
            let c = self.chars[self.position];
            let inner_dash = c == '-'
                && self.position > start
                && self
                    .chars
                    .get(self.position + 1)
                    .is_some_and(|next| next.is_alphanumeric());
            if c.is_alphanumeric() || c == '_' || c == '.' || inner_dash {
                self.position += 1;
            } else {
                break;
            }
        }
        if self.position == start {
            return Err(self.error(format!("expected a condition name, found '{first}'")));
        }
        Ok(self.chars[start..self.position].iter().collect())
    }

    fn condition_index(&self, label: &str) -> Result<usize, ContrastError> {
        self.conditions
            .iter()
            .position(|name| name == label)
            .or_else(|| {
                self.conditions
                    .iter()
                    .position(|name| name.eq_ignore_ascii_case(label.trim()))
            })
            .ok_or_else(|| ContrastError::UnknownCondition {
                text: self.text.to_string(),
                label: label.to_string(),
                available: self.conditions.join(", "),
            })
    }

    fn expression(&mut self) -> Result<Vec<f64>, ContrastError> {
        let mut total = vec![0.0; self.conditions.len()];
        let mut sign = 1.0;
        match self.peek() {
            Some('-') => {
                sign = -1.0;
                self.position += 1;
            }
            Some('+') => self.position += 1,
            _ => {}
        }
        loop {
            let term = self.term()?;
            for (slot, value) in total.iter_mut().zip(term) {
                *slot += sign * value;
            }
            match self.peek() {
                Some('+') => {
                    sign = 1.0;
                    self.position += 1;
                }
                Some('-') => {
                    sign = -1.0;
                    self.position += 1;
                }
                _ => return Ok(total),
            }
        }
    }

    fn term(&mut self) -> Result<Vec<f64>, ContrastError> {
        let mut factor = 1.0;
        if let Some(value) = self.number() {
            factor = value;
            if self.peek() == Some('*') {
                self.position += 1;
            }
        }
        let mut vector = match self.peek() {
            Some('(') => {
                self.position += 1;
                self.depth += 1;
                if self.depth > MAX_NESTING {
                    return Err(self.error(format!(
                        "parentheses are nested more than {MAX_NESTING} deep; write the combination more simply"
                    )));
                }
                let inner = self.expression()?;
                self.depth -= 1;
                if self.peek() != Some(')') {
                    return Err(self.error("expected ')'"));
                }
                self.position += 1;
                inner
            }
            _ => {
                let label = self.label()?;
                let index = self.condition_index(&label)?;
                let mut unit = vec![0.0; self.conditions.len()];
                unit[index] = 1.0;
                unit
            }
        };
        loop {
            match self.peek() {
                Some('*') => {
                    self.position += 1;
                    factor *= self.number().ok_or_else(|| self.error("expected a number after '*'"))?;
                }
                Some('/') => {
                    self.position += 1;
                    let divisor = self.number().ok_or_else(|| self.error("expected a number after '/'"))?;
                    if divisor == 0.0 {
                        return Err(self.error("division by zero"));
                    }
                    factor /= divisor;
                }
                _ => break,
            }
        }
        vector.iter_mut().for_each(|value| *value *= factor);
        Ok(vector)
    }
}

/// Parses one combination against the condition names.
///
/// # Errors
///
/// [`ContrastError`] naming the problem and its position, or the unknown label.
pub fn parse_contrast(text: &str, conditions: &[String]) -> Result<Contrast, ContrastError> {
    let trimmed = text.trim();
    // A name is text before a colon that is outside quotes and brackets.
    let mut depth_quote: Option<char> = None;
    let mut name_split = None;
    for (index, c) in trimmed.char_indices() {
        match (depth_quote, c) {
            (None, '\'' | '"') => depth_quote = Some(c),
            (None, '[') => depth_quote = Some(']'),
            (Some(close), _) if c == close => depth_quote = None,
            (None, ':') => {
                name_split = Some(index);
                break;
            }
            _ => {}
        }
    }
    let (name, expression) = match name_split {
        Some(index) => (trimmed[..index].trim().to_string(), trimmed[index + 1..].trim()),
        None => (trimmed.to_string(), trimmed),
    };
    let mut parser = Parser {
        text: trimmed,
        chars: expression.chars().collect(),
        position: 0,
        conditions,
        depth: 0,
    };
    if parser.peek().is_none() {
        return Err(parser.error("the expression is empty"));
    }
    let coefficients = parser.expression()?;
    if parser.peek().is_some() {
        return Err(parser.error("unexpected text"));
    }
    if coefficients.iter().all(|value| *value == 0.0) {
        return Err(ContrastError::AllZero {
            text: trimmed.to_string(),
        });
    }
    Ok(Contrast {
        name,
        expression: expression.to_string(),
        coefficients,
    })
}

/// Parses several combinations separated by `;`, skipping empty pieces.
///
/// # Errors
///
/// The first [`ContrastError`].
pub fn parse_contrasts(text: &str, conditions: &[String]) -> Result<Vec<Contrast>, ContrastError> {
    split_outside_quotes(text, ';')
        .into_iter()
        .filter(|piece| !piece.trim().is_empty())
        .map(|piece| parse_contrast(&piece, conditions))
        .collect()
}

fn split_outside_quotes(text: &str, separator: char) -> Vec<String> {
    let mut pieces = Vec::new();
    let mut current = String::new();
    let mut closing: Option<char> = None;
    for c in text.chars() {
        match closing {
            Some(close) if c == close => closing = None,
            Some(_) => {}
            None if c == '\'' || c == '"' => closing = Some(c),
            None if c == '[' => closing = Some(']'),
            None if c == separator => {
                pieces.push(std::mem::take(&mut current));
                continue;
            }
            None => {}
        }
        current.push(c);
    }
    pieces.push(current);
    pieces
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(list: &[&str]) -> Vec<String> {
        list.iter().map(|name| name.to_string()).collect()
    }

    fn check(text: &str, expected: &[f64]) {
        let conditions = names(&["A", "B", "C", "Line 2", "2024a"]);
        let parsed = parse_contrast(text, &conditions).unwrap_or_else(|error| panic!("{text}: {error}"));
        assert_eq!(parsed.coefficients, expected, "{text}");
    }

    #[test]
    fn reads_plain_arithmetic() {
        check("A - B", &[1.0, -1.0, 0.0, 0.0, 0.0]);
        check("(A + B)/2 - C", &[0.5, 0.5, -1.0, 0.0, 0.0]);
        check("0.5*A + 0.5 B - [Line 2]", &[0.5, 0.5, 0.0, -1.0, 0.0]);
        check("new vs old: 'Line 2' - 2024a", &[0.0, 0.0, 0.0, 1.0, -1.0]);
        check("-A + 2*C", &[-1.0, 0.0, 2.0, 0.0, 0.0]);
        check("a - b", &[1.0, -1.0, 0.0, 0.0, 0.0]);
    }

    #[test]
    fn names_and_several() {
        let conditions = names(&["A", "B", "C"]);
        let parsed = parse_contrasts("first: A - B; second: (A+B)/2 - C;", &conditions).expect("valid");
        assert_eq!(parsed.len(), 2);
        assert_eq!(parsed[0].name, "first");
        assert!(parsed[1].is_contrast());
        assert!(!parse_contrast("A + B", &conditions).expect("valid").is_contrast());
    }

    #[test]
    fn clear_errors() {
        let conditions = names(&["A", "B"]);
        assert!(matches!(
            parse_contrast("A - Z", &conditions),
            Err(ContrastError::UnknownCondition { .. })
        ));
        assert!(matches!(
            parse_contrast("A - (B", &conditions),
            Err(ContrastError::Syntax { .. })
        ));
        assert!(matches!(
            parse_contrast("A / 0", &conditions),
            Err(ContrastError::Syntax { .. })
        ));
        assert!(matches!(
            parse_contrast("A - A", &conditions),
            Err(ContrastError::AllZero { .. })
        ));
        assert!(matches!(
            parse_contrast("", &conditions),
            Err(ContrastError::Syntax { .. })
        ));
    }

    #[test]
    fn deep_nesting_is_refused_with_a_message_not_a_stack_overflow() {
        let conditions = names(&["A", "B"]);
        // 64 levels are read; 5,000 (a hostile settings cell) are refused.
        let fine = format!("{}A - B{}", "(".repeat(MAX_NESTING), ")".repeat(MAX_NESTING));
        assert!(parse_contrast(&fine, &conditions).is_ok());
        let hostile = format!("{}A - B{}", "(".repeat(5_000), ")".repeat(5_000));
        let Err(error) = parse_contrast(&hostile, &conditions) else {
            panic!("5,000 levels must be refused");
        };
        assert!(error.to_string().contains("nested more than 64 deep"), "{error}");
    }
}
