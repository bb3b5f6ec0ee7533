//! A direct reader of xlsx worksheet XML, for speed.
//!
//! calamine's streaming reader spends most of a large sheet's read time on
//! per-cell work around its general XML reader; the inflating itself is a
//! small part. This module scans the inflated bytes itself: tags are found
//! with `memchr`, only the attributes a cell needs are looked at, numbers are
//! parsed with the same float parser calamine uses, and shared strings are
//! interned once per distinct string instead of once per cell.
//!
//! It reads what calamine reads, with the same meaning: positions from `r`
//! attributes or counted along rows, shared strings, inline strings (rich
//! text runs joined, phonetic runs left out), formula strings, booleans,
//! errors, ISO dates, and numbers whose cell style has a date or time format
//! becoming dates. Anything it does not plainly understand (an unknown cell
//! type or child element, an escape it does not decode, a malformed
//! reference, a namespace prefix, an odd part layout) makes it decline:
//! [`read_sheet`] returns `None` and the caller reads the sheet with calamine,
//! which then gives its own answer or error. Declining costs time only.
//!
//! Tests in `read/mod.rs` compare the grids of both paths.

use std::io::{BufReader, Read, Seek};
use std::path::Path;

use crate::cell::{parse_a1_range, CellRect, CellValue};

use super::guard::attribute_value;
use super::GridBuilder;

/// Bytes inflated per read.
const CHUNK_BYTES: usize = 1 << 18;

/// Longest single tag or text run accepted; longer ones make the reader decline.
const MAX_TOKEN_BYTES: usize = 64 << 20;

/// Why the fast reader stopped without a grid.
#[derive(Debug)]
pub(crate) enum Stop {
    /// The sheet has something this reader leaves to calamine.
    Decline,
    /// The cell cap was reached.
    TooManyCells,
}

type Outcome<T> = Result<T, Stop>;

/// What a sheet read gave beside the cells: merged areas, and hidden rows
/// and columns, found as `merged.rs` finds them (a tag with ` hidden=`).
pub(crate) struct FastSheet {
    pub(crate) merged: Vec<CellRect>,
    pub(crate) hidden: super::merged::Hidden,
}

/// The attribute `merged.rs` looks for to find hidden rows and columns.
const HIDDEN_NEEDLE: &[u8] = b" hidden=";

/// Notes a tag's hidden row or columns when it carries the `hidden` attribute.
#[inline]
fn note_if_hidden(buf: &[u8], name: (usize, usize), attrs: (usize, usize), hidden: &mut super::merged::Hidden) {
    let attributes = &buf[attrs.0..attrs.1];
    if attributes.len() >= HIDDEN_NEEDLE.len() && memchr::memmem::find(attributes, HIDDEN_NEEDLE).is_some() {
        super::merged::note_hidden(&String::from_utf8_lossy(&buf[name.0..attrs.1]), hidden);
    }
}

/// One token of the XML stream; ranges index the scanner's buffer and are
/// valid until the next call.
#[derive(Debug, Clone, Copy)]
enum Token {
    /// `<name attrs>` or `<name attrs/>`.
    Start {
        name: (usize, usize),
        attrs: (usize, usize),
        empty: bool,
    },
    /// `</name>`.
    End { name: (usize, usize) },
    /// Character data between tags.
    Text((usize, usize)),
    /// `<![CDATA[...]]>`, the content only.
    CData((usize, usize)),
    /// End of the part.
    Eof,
}

/// A pull scanner over an inflating reader.
struct Scanner<R> {
    reader: R,
    buf: Vec<u8>,
    pos: usize,
    len: usize,
    eof: bool,
    /// An empty-element tag was returned as Start; its End is due next.
    pending_end: Option<(usize, usize)>,
}

impl<R: Read> Scanner<R> {
    fn new(reader: R) -> Self {
        Self {
            reader,
            buf: vec![0; CHUNK_BYTES * 2],
            pos: 0,
            len: 0,
            eof: false,
            pending_end: None,
        }
    }

    /// Moves the unread bytes to the front and reads more; false at the end of input.
    fn fill(&mut self) -> Outcome<bool> {
        if self.eof {
            return Ok(false);
        }
        if self.pos > 0 {
            self.buf.copy_within(self.pos..self.len, 0);
            self.len -= self.pos;
            self.pos = 0;
        }
        if self.buf.len() - self.len < CHUNK_BYTES {
            if self.len > MAX_TOKEN_BYTES {
                return Err(Stop::Decline);
            }
            let grown = self.buf.len() * 2;
            self.buf.resize(grown, 0);
        }
        loop {
            match self.reader.read(&mut self.buf[self.len..]) {
                Ok(0) => {
                    self.eof = true;
                    return Ok(false);
                }
                Ok(read) => {
                    self.len += read;
                    return Ok(true);
                }
                Err(error) if error.kind() == std::io::ErrorKind::Interrupted => continue,
                Err(_) => return Err(Stop::Decline),
            }
        }
    }

    /// The common cell body `<v>text</v></c>`, when it is wholly in the
    /// buffer: the text's range, the scanner moved past the cell's end.
    /// Anything else (or a body cut by the buffer's end) gives `None` and
    /// moves nothing, for the general path.
    #[inline]
    fn plain_v_element(&mut self) -> Option<(usize, usize)> {
        if self.pending_end.is_some() {
            return None;
        }
        let rest = &self.buf[self.pos..self.len];
        if rest.len() < 3 || &rest[..3] != b"<v>" {
            return None;
        }
        let text_len = rest[3..].iter().take(64).position(|byte| *byte == b'<')?;
        let after = &rest[3 + text_len..];
        if after.len() < 8 || &after[..8] != b"</v></c>" {
            return None;
        }
        let start = self.pos + 3;
        self.pos = start + text_len + 8;
        Some((start, start + text_len))
    }

    /// The common inline-string body `<is><t>text</t></is></c>`, when it is
    /// wholly in the buffer: the text decoded and trimmed into `out`, the
    /// scanner moved past the cell's end. Otherwise false, nothing moved.
    #[inline]
    fn plain_inline_element(&mut self, out: &mut String) -> Outcome<bool> {
        const OPEN: &[u8] = b"<is><t>";
        const CLOSE: &[u8] = b"</t></is></c>";
        if self.pending_end.is_some() {
            return Ok(false);
        }
        let rest = &self.buf[self.pos..self.len];
        if rest.len() < OPEN.len() || !same(&rest[..OPEN.len()], OPEN) {
            return Ok(false);
        }
        let Some(text_len) = rest[OPEN.len()..].iter().take(1024).position(|byte| *byte == b'<') else {
            return Ok(false);
        };
        let after = &rest[OPEN.len() + text_len..];
        if after.len() < CLOSE.len() || !same(&after[..CLOSE.len()], CLOSE) {
            return Ok(false);
        }
        out.clear();
        decode_text(&rest[OPEN.len()..OPEN.len() + text_len], out)?;
        trim_from(out, 0);
        if out.contains("_x") {
            // The _xHHHH_ escapes of the format are left to calamine.
            return Err(Stop::Decline);
        }
        self.pos += OPEN.len() + text_len + CLOSE.len();
        Ok(true)
    }

    fn bytes(&self, range: (usize, usize)) -> &[u8] {
        &self.buf[range.0..range.1]
    }

    #[inline]
    fn name_is(&self, range: (usize, usize), name: &[u8]) -> bool {
        same(self.bytes(range), name)
    }

    fn next(&mut self) -> Outcome<Token> {
        if let Some(name) = self.pending_end.take() {
            return Ok(Token::End { name });
        }
        loop {
            if self.pos == self.len && !self.fill()? {
                return Ok(Token::Eof);
            }
            let start = self.pos;
            if self.buf[start] != b'<' {
                let window = &self.buf[start..self.len];
                let near = window.iter().take(32).position(|byte| *byte == b'<');
                let found = near.or_else(|| {
                    if window.len() > 32 {
                        memchr::memchr(b'<', &window[32..]).map(|offset| offset + 32)
                    } else {
                        None
                    }
                });
                match found {
                    Some(offset) => {
                        self.pos = start + offset;
                        return Ok(Token::Text((start, start + offset)));
                    }
                    None if self.eof => {
                        self.pos = self.len;
                        return Ok(Token::Text((start, self.len)));
                    }
                    None => {
                        self.fill()?;
                        continue;
                    }
                }
            }
            if self.len - start < 9 && !self.eof {
                self.fill()?;
                continue;
            }
            let head = &self.buf[start..self.len.min(start + 9)];
            if head.starts_with(b"<!--") {
                let end = self.find(b"-->")?.ok_or(Stop::Decline)?;
                self.pos = end + 3;
                continue;
            }
            if head.starts_with(b"<![CDATA[") {
                let end = self.find(b"]]>")?.ok_or(Stop::Decline)?;
                let content = (self.pos + 9, end);
                self.pos = end + 3;
                return Ok(Token::CData(content));
            }
            if head.starts_with(b"<?") {
                let end = self.find(b"?>")?.ok_or(Stop::Decline)?;
                self.pos = end + 2;
                continue;
            }
            if head.starts_with(b"<!") {
                // Document type declarations are left to calamine.
                return Err(Stop::Decline);
            }
            // A tag: find its closing '>' outside quoted attribute values.
            let Some(close) = self.tag_end(start + 1) else {
                if !self.fill()? {
                    return Err(Stop::Decline);
                }
                continue;
            };
            let body = (start + 1, close);
            self.pos = close + 1;
            if self.buf[body.0] == b'/' {
                let name = self.local_name(body.0 + 1, body.1);
                return Ok(Token::End { name });
            }
            let empty = body.1 > body.0 && self.buf[body.1 - 1] == b'/';
            let inner_end = if empty { body.1 - 1 } else { body.1 };
            let name_end = self.name_end(body.0, inner_end);
            if name_end == body.0 {
                return Err(Stop::Decline);
            }
            let name = self.local_name(body.0, inner_end);
            if empty {
                self.pending_end = Some(name);
            }
            return Ok(Token::Start {
                name,
                attrs: (name_end, inner_end),
                empty,
            });
        }
    }

    /// Index of the next `pattern` at or after the current position, reading
    /// on as needed (the current construct stays at `self.pos`).
    fn find(&mut self, pattern: &[u8]) -> Outcome<Option<usize>> {
        let mut from = self.pos;
        loop {
            if let Some(offset) = memchr::memmem::find(&self.buf[from..self.len], pattern) {
                return Ok(Some(from + offset));
            }
            let resume = (self.len + 1).saturating_sub(pattern.len()).max(self.pos) - self.pos;
            if !self.fill()? {
                return Ok(None);
            }
            from = self.pos + resume;
        }
    }

    /// The name of a tag without its namespace prefix, as calamine compares names.
    #[inline]
    fn local_name(&self, from: usize, to: usize) -> (usize, usize) {
        let end = self.name_end(from, to);
        match self.buf[from..end].iter().rposition(|byte| *byte == b':') {
            Some(colon) => (from + colon + 1, end),
            None => (from, end),
        }
    }

    /// Index of the '>' closing a tag whose body starts at `from`, quotes respected.
    /// Tags are short, so a plain loop beats a vectorised search here.
    #[inline]
    fn tag_end(&self, from: usize) -> Option<usize> {
        let bytes = &self.buf[..self.len];
        let mut at = from;
        let mut quote = 0u8;
        while at < bytes.len() {
            let byte = bytes[at];
            if quote != 0 {
                if byte == quote {
                    quote = 0;
                }
            } else if byte == b'>' {
                return Some(at);
            } else if byte == b'"' || byte == b'\'' {
                quote = byte;
            }
            at += 1;
        }
        None
    }

    fn name_end(&self, from: usize, to: usize) -> usize {
        self.buf[from..to]
            .iter()
            .position(|byte| byte.is_ascii_whitespace() || *byte == b'/')
            .map_or(to, |offset| from + offset)
    }

    /// Skips to the end of the element just opened (non-empty) by `name`.
    fn skip_element(&mut self, name: &[u8]) -> Outcome<()> {
        let name = name.to_vec();
        let mut depth = 0usize;
        loop {
            match self.next()? {
                Token::Start { name: found, .. } if self.bytes(found) == name.as_slice() => depth += 1,
                Token::End { name: found } if self.bytes(found) == name.as_slice() => {
                    if depth == 0 {
                        return Ok(());
                    }
                    depth -= 1;
                }
                Token::Eof => return Err(Stop::Decline),
                _ => {}
            }
        }
    }

    /// Reads a text element's content up to its end tag (`<v>`, `<t>`),
    /// entities decoded and line ends normalised as an XML parser does.
    fn read_text_content(&mut self, name: &[u8], out: &mut String) -> Outcome<()> {
        loop {
            match self.next()? {
                Token::Text(range) => decode_text(self.bytes(range), out)?,
                Token::CData(range) => push_normalised(bytes_str(self.bytes(range))?, out),
                Token::End { name: found } if self.bytes(found) == name => return Ok(()),
                Token::Eof => return Err(Stop::Decline),
                // Markup inside a text element is left to calamine.
                _ => return Err(Stop::Decline),
            }
        }
    }

    /// Reads a string item (`<si>` or `<is>`), already opened by `closing`:
    /// the text of its `<t>` elements joined, phonetic runs left out.
    fn read_string_item(&mut self, closing: &[u8], out: &mut String) -> Outcome<()> {
        let closing = closing.to_vec();
        let mut phonetic = false;
        loop {
            match self.next()? {
                Token::Start { name, attrs, .. } => {
                    let name_bytes = self.bytes(name);
                    if name_bytes == b"rPh" {
                        phonetic = true;
                    } else if name_bytes == b"t" && !phonetic {
                        let preserve = attribute(self.bytes(attrs), b"xml:space") == Some(b"preserve".as_slice());
                        let start = out.len();
                        self.read_text_content(b"t", out)?;
                        if !preserve {
                            trim_from(out, start);
                        }
                        if out[start..].contains("_x") {
                            // The _xHHHH_ escapes of the format are left to calamine.
                            return Err(Stop::Decline);
                        }
                    }
                }
                Token::End { name } => {
                    let name_bytes = self.bytes(name);
                    if name_bytes == closing.as_slice() {
                        return Ok(());
                    }
                    if name_bytes == b"rPh" {
                        phonetic = false;
                    }
                }
                Token::Eof => return Err(Stop::Decline),
                Token::Text(_) | Token::CData(_) => {}
            }
        }
    }
}

/// Trims XML white space (space, tab, CR, LF; not other Unicode spaces)
/// from both ends of `out[start..]`, as calamine trims a `<t>` without
/// `xml:space="preserve"`.
fn trim_from(out: &mut String, start: usize) {
    const SPACE: [char; 4] = [' ', '\t', '\r', '\n'];
    let piece = &out[start..];
    let lead = piece.len() - piece.trim_start_matches(SPACE).len();
    let keep = piece.trim_matches(SPACE).len();
    if lead > 0 {
        out.replace_range(start..start + lead, "");
    }
    out.truncate(start + keep);
}

/// Byte-wise equality, inlined for the short names compared per tag.
#[inline]
fn same(a: &[u8], b: &[u8]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x == y)
}

fn bytes_str(bytes: &[u8]) -> Outcome<&str> {
    std::str::from_utf8(bytes).map_err(|_| Stop::Decline)
}

/// Appends text with XML line-end normalisation (CR LF and lone CR become LF).
fn push_normalised(text: &str, out: &mut String) {
    if !text.contains('\r') {
        out.push_str(text);
        return;
    }
    let mut rest = text;
    while let Some(at) = rest.find('\r') {
        out.push_str(&rest[..at]);
        out.push('\n');
        rest = &rest[at + 1..];
        if rest.starts_with('\n') {
            rest = &rest[1..];
        }
    }
    out.push_str(rest);
}

/// Appends character data with its entity and character references decoded.
fn decode_text(bytes: &[u8], out: &mut String) -> Outcome<()> {
    let text = bytes_str(bytes)?;
    let mut rest = text;
    while let Some(at) = rest.find('&') {
        push_normalised(&rest[..at], out);
        let after = &rest[at + 1..];
        let end = after.find(';').ok_or(Stop::Decline)?;
        let entity = &after[..end];
        let decoded = match entity {
            "lt" => '<',
            "gt" => '>',
            "amp" => '&',
            "apos" => '\'',
            "quot" => '"',
            _ => {
                let code = if let Some(hex) = entity.strip_prefix("#x") {
                    u32::from_str_radix(hex, 16).ok()
                } else if let Some(decimal) = entity.strip_prefix('#') {
                    decimal.parse::<u32>().ok()
                } else {
                    None
                };
                code.and_then(char::from_u32).ok_or(Stop::Decline)?
            }
        };
        out.push(decoded);
        rest = &after[end + 1..];
    }
    push_normalised(rest, out);
    Ok(())
}

/// The raw value of an attribute in a tag's attribute bytes.
fn attribute<'a>(attrs: &'a [u8], name: &[u8]) -> Option<&'a [u8]> {
    let mut at = 0;
    while at < attrs.len() {
        while at < attrs.len() && attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        let key_start = at;
        while at < attrs.len() && attrs[at] != b'=' && !attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        let key = &attrs[key_start..at];
        while at < attrs.len() && attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        if attrs.get(at) != Some(&b'=') {
            return None;
        }
        at += 1;
        while at < attrs.len() && attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        let quote = *attrs.get(at)?;
        if quote != b'"' && quote != b'\'' {
            return None;
        }
        let value_start = at + 1;
        let value_end = value_start + memchr::memchr(quote, &attrs[value_start..])?;
        if key == name {
            return Some(&attrs[value_start..value_end]);
        }
        at = value_end + 1;
    }
    None
}

/// The three attributes of a cell tag, in one pass.
/// A cell's `r`, `s` and `t` attribute values, where present.
type CellAttributes<'a> = (Option<&'a [u8]>, Option<&'a [u8]>, Option<&'a [u8]>);

fn cell_attributes(attrs: &[u8]) -> Outcome<CellAttributes<'_>> {
    let (mut r, mut s, mut t) = (None, None, None);
    let mut at = 0;
    loop {
        while at < attrs.len() && attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        if at == attrs.len() {
            return Ok((r, s, t));
        }
        let key_start = at;
        while at < attrs.len() && attrs[at] != b'=' && !attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        let key_end = at;
        while at < attrs.len() && attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        if attrs.get(at) != Some(&b'=') {
            return Err(Stop::Decline);
        }
        at += 1;
        while at < attrs.len() && attrs[at].is_ascii_whitespace() {
            at += 1;
        }
        let quote = *attrs.get(at).ok_or(Stop::Decline)?;
        if quote != b'"' && quote != b'\'' {
            return Err(Stop::Decline);
        }
        let value_start = at + 1;
        let value_end = value_start + memchr::memchr(quote, &attrs[value_start..]).ok_or(Stop::Decline)?;
        let value = &attrs[value_start..value_end];
        match &attrs[key_start..key_end] {
            b"r" => r = Some(value),
            b"s" => s = Some(value),
            b"t" => t = Some(value),
            _ => {}
        }
        at = value_end + 1;
    }
}

/// A cell or row reference: zero-based row and, if letters lead, column.
fn parse_reference(text: &[u8]) -> Outcome<(u32, Option<u32>)> {
    let mut at = 0;
    let mut col: u32 = 0;
    while at < text.len() && text[at].is_ascii_alphabetic() {
        col = col * 26 + (text[at].to_ascii_uppercase() - b'A') as u32 + 1;
        if col > 1 << 20 {
            return Err(Stop::Decline);
        }
        at += 1;
    }
    let digits = &text[at..];
    if digits.is_empty() || digits.len() > 9 || !digits.iter().all(u8::is_ascii_digit) {
        return Err(Stop::Decline);
    }
    let row: u32 = digits.iter().fold(0, |row, digit| row * 10 + (digit - b'0') as u32);
    if row == 0 {
        return Err(Stop::Decline);
    }
    Ok((row - 1, (at > 0).then(|| col - 1)))
}

/// A whole number of plain decimal digits.
fn parse_index(text: &[u8]) -> Option<usize> {
    if text.is_empty() || text.len() > 18 || !text.iter().all(u8::is_ascii_digit) {
        return None;
    }
    Some(
        text.iter()
            .fold(0usize, |value, digit| value * 10 + (digit - b'0') as usize),
    )
}

/// Whether a number format shows dates or times.
///
/// The first section of the code is looked at, outside quoted text,
/// characters escaped with `\`, spacing (`_x`) and fill (`*x`) characters,
/// and bracketed parts (colours, conditions, locales), which are skipped,
/// except an elapsed-time part such as `[h]` or `[mm]`, which counts. A
/// date or time letter (d, m, y, h, s, any case) or an AM/PM marker
/// (`AM/PM`, `A/P`) makes it a date format.
pub(crate) fn is_date_format(code: &str) -> bool {
    let chars: Vec<char> = code.chars().collect();
    let mut at = 0;
    while at < chars.len() {
        let c = chars[at];
        match c {
            '"' => {
                at += 1;
                while at < chars.len() && chars[at] != '"' {
                    at += 1;
                }
            }
            '\\' | '_' | '*' => at += 1,
            ';' => return false,
            '[' => {
                let close = chars[at..].iter().position(|&c| c == ']').map(|offset| at + offset);
                let Some(close) = close else { return false };
                let inside = &chars[at + 1..close];
                if !inside.is_empty()
                    && matches!(inside[0].to_ascii_lowercase(), 'h' | 'm' | 's')
                    && inside.iter().all(|c| c.eq_ignore_ascii_case(&inside[0]))
                {
                    return true;
                }
                at = close;
            }
            'd' | 'D' | 'm' | 'M' | 'y' | 'Y' | 'h' | 'H' | 's' | 'S' => return true,
            'a' | 'A' => {
                let rest: String = chars[at..].iter().take(5).collect::<String>().to_ascii_lowercase();
                if rest.starts_with("am/pm") || rest.starts_with("a/p") {
                    return true;
                }
            }
            _ => {}
        }
        at += 1;
    }
    false
}

/// Whether a built-in number format id (ECMA-376 Part 1, 18.8.30, with the
/// East Asian date ids) shows dates or times.
pub(crate) fn is_builtin_date_id(id: u32) -> bool {
    matches!(id, 14..=22 | 27..=36 | 45..=47 | 50..=58)
}

/// Shared strings and which cell styles show dates, read once per workbook.
#[derive(Debug, Default)]
pub(crate) struct WorkbookParts {
    strings: Vec<String>,
    date_styles: Vec<bool>,
}

fn find_entry<R: Read + Seek>(archive: &zip::ZipArchive<R>, wanted: &str) -> Outcome<Option<String>> {
    if archive.index_for_name(wanted).is_some() {
        return Ok(Some(wanted.to_string()));
    }
    // A differently cased name is found by calamine's own lookup; leave it to calamine.
    let differently_cased = archive
        .file_names()
        .filter_map(Result::ok)
        .any(|name| name.eq_ignore_ascii_case(wanted));
    if differently_cased {
        Err(Stop::Decline)
    } else {
        Ok(None)
    }
}

fn read_shared_strings<R: Read>(reader: R, strings: &mut Vec<String>) -> Outcome<()> {
    let mut scanner = Scanner::new(reader);
    loop {
        match scanner.next()? {
            Token::Start { name, .. } if scanner.name_is(name, b"sst") => break,
            Token::Eof => return Err(Stop::Decline),
            _ => {}
        }
    }
    loop {
        match scanner.next()? {
            Token::Start { name, .. } if scanner.name_is(name, b"si") => {
                let mut text = String::new();
                scanner.read_string_item(b"si", &mut text)?;
                strings.push(text);
            }
            Token::End { name } if scanner.name_is(name, b"sst") => return Ok(()),
            Token::Eof => return Err(Stop::Decline),
            _ => {}
        }
    }
}

fn read_date_styles<R: Read>(reader: R, date_styles: &mut Vec<bool>) -> Outcome<()> {
    let mut scanner = Scanner::new(reader);
    let mut custom: Vec<(String, bool)> = Vec::new();
    let mut in_formats = false;
    let mut in_cell_xfs = false;
    let mut xf_depth = 0usize;
    loop {
        match scanner.next()? {
            Token::Start { name, attrs, .. } => {
                let name_bytes = scanner.bytes(name);
                let attrs = scanner.bytes(attrs);
                match name_bytes {
                    b"numFmts" => in_formats = true,
                    b"cellXfs" => in_cell_xfs = true,
                    b"numFmt" if in_formats => {
                        if let (Some(id), Some(code)) = (attribute(attrs, b"numFmtId"), attribute(attrs, b"formatCode"))
                        {
                            let mut decoded = String::new();
                            decode_text(code, &mut decoded)?;
                            let id = bytes_str(id)?.to_string();
                            let date = is_date_format(&decoded);
                            match custom.iter_mut().find(|(known, _)| *known == id) {
                                Some(entry) => entry.1 = date,
                                None => custom.push((id, date)),
                            }
                        }
                    }
                    b"xf" if in_cell_xfs => {
                        if xf_depth == 0 {
                            let date = match attribute(attrs, b"numFmtId") {
                                None => false,
                                Some(id) => {
                                    let id = bytes_str(id)?;
                                    match custom.iter().find(|(known, _)| known == id) {
                                        Some((_, date)) => *date,
                                        // Only the canonical spelling of an id names a built-in format.
                                        None => id
                                            .parse::<u32>()
                                            .is_ok_and(|number| number.to_string() == id && is_builtin_date_id(number)),
                                    }
                                }
                            };
                            date_styles.push(date);
                        }
                        xf_depth += 1;
                    }
                    _ => {}
                }
            }
            Token::End { name } => match scanner.bytes(name) {
                b"numFmts" => in_formats = false,
                b"cellXfs" => in_cell_xfs = false,
                b"xf" if in_cell_xfs => xf_depth = xf_depth.saturating_sub(1),
                _ => {}
            },
            Token::Eof => return Ok(()),
            _ => {}
        }
    }
}

impl WorkbookParts {
    fn load<R: Read + Seek>(archive: &mut zip::ZipArchive<R>, max_entry_bytes: u64) -> Outcome<Self> {
        let mut parts = WorkbookParts::default();
        if let Some(name) = find_entry(archive, "xl/sharedStrings.xml")? {
            let entry = archive.by_name(&name).map_err(|_| Stop::Decline)?;
            read_shared_strings(entry.take(max_entry_bytes), &mut parts.strings)?;
        }
        if let Some(name) = find_entry(archive, "xl/styles.xml")? {
            let entry = archive.by_name(&name).map_err(|_| Stop::Decline)?;
            read_date_styles(entry.take(max_entry_bytes), &mut parts.date_styles)?;
        }
        Ok(parts)
    }
}

/// What the direct reader keeps between the sheets of one workbook: the
/// opened archive, the part of each sheet, the shared strings and date
/// styles. Reading each of 10,000 sheets would otherwise open the archive,
/// its directory of 10,000 entries and the workbook part again each time.
pub(crate) struct DirectBook {
    archive: zip::ZipArchive<BufReader<std::fs::File>>,
    sheet_parts: std::collections::HashMap<String, String>,
    parts: WorkbookParts,
}

impl DirectBook {
    /// Opens the workbook for the direct reader, or declines.
    pub(crate) fn open(path: &Path, max_entry_bytes: u64) -> Outcome<Self> {
        let file = super::open_regular_file(path).map_err(|_| Stop::Decline)?;
        let mut archive = zip::ZipArchive::new(BufReader::new(file)).map_err(|_| Stop::Decline)?;
        if archive.index_for_name("xl/workbook.xml").is_none() {
            return Err(Stop::Decline);
        }
        let sheet_parts = super::merged::sheet_part_paths(&mut archive).ok_or(Stop::Decline)?;
        let parts = WorkbookParts::load(&mut archive, max_entry_bytes)?;
        Ok(Self {
            archive,
            sheet_parts,
            parts,
        })
    }
}

/// Reads the cells of `sheet` into `builder`, or declines.
pub(crate) fn read_sheet(
    book: &mut DirectBook,
    sheet: &str,
    max_entry_bytes: u64,
    builder: &mut GridBuilder,
) -> Outcome<FastSheet> {
    if sheet.contains(['&', '<', '>', '"', '\'']) {
        return Err(Stop::Decline);
    }
    let part = book.sheet_parts.get(sheet).cloned().ok_or(Stop::Decline)?;
    let parts = &book.parts;
    let archive = &mut book.archive;
    let entry = archive.by_name(&part).map_err(|_| Stop::Decline)?;
    // The smallest cell, `<c><v>1</v></c>`, takes 15 bytes of XML.
    let most_cells = entry.size() / 15;
    if entry.size() < THREAD_ABOVE_BYTES {
        let limited = LimitedReader {
            inner: entry,
            left: max_entry_bytes,
        };
        return read_cells(Scanner::new(limited), parts, most_cells, builder);
    }
    drop(entry);
    // A large part is inflated on a second thread while this one parses.
    std::thread::scope(|scope| {
        let (full_sender, full_receiver) = std::sync::mpsc::sync_channel::<std::io::Result<Vec<u8>>>(PIPELINE_CHUNKS);
        let (empty_sender, empty_receiver) = std::sync::mpsc::channel::<Vec<u8>>();
        let inflater = scope.spawn(move || {
            let Ok(entry) = archive.by_name(&part) else {
                let _ = full_sender.send(Err(std::io::Error::other("the part went missing")));
                return;
            };
            let mut limited = LimitedReader {
                inner: entry,
                left: max_entry_bytes,
            };
            loop {
                let mut chunk = empty_receiver.try_recv().unwrap_or_else(|_| vec![0; CHUNK_BYTES]);
                chunk.resize(CHUNK_BYTES, 0);
                let mut filled = 0;
                let outcome = loop {
                    match limited.read(&mut chunk[filled..]) {
                        Ok(0) => break Ok(()),
                        Ok(read) => {
                            filled += read;
                            if filled == chunk.len() {
                                break Ok(());
                            }
                        }
                        Err(error) if error.kind() == std::io::ErrorKind::Interrupted => {}
                        Err(error) => break Err(error),
                    }
                };
                chunk.truncate(filled);
                let done = filled == 0;
                let sent = match outcome {
                    Ok(()) => full_sender.send(Ok(chunk)),
                    Err(error) => full_sender.send(Err(error)),
                };
                // A parser that stopped early hangs up; so does the end of the part.
                if sent.is_err() || done {
                    return;
                }
            }
        });
        let reader = ChunkReader {
            chunks: full_receiver,
            spent: empty_sender,
            current: Vec::new(),
            at: 0,
            ended: false,
        };
        let outcome = read_cells(Scanner::new(reader), parts, most_cells, builder);
        if inflater.join().is_err() {
            return Err(Stop::Decline);
        }
        outcome
    })
}

/// Shared formula groups whose function is remembered (`si` indices below this).
const MAX_SHARED_GROUPS: usize = 1 << 16;

/// Parts at least this large are inflated on a thread of their own.
const THREAD_ABOVE_BYTES: u64 = 8 << 20;

/// Inflated chunks in flight between the two threads.
const PIPELINE_CHUNKS: usize = 8;

/// Reads the chunks the inflating thread sends, handing spent ones back.
struct ChunkReader {
    chunks: std::sync::mpsc::Receiver<std::io::Result<Vec<u8>>>,
    spent: std::sync::mpsc::Sender<Vec<u8>>,
    current: Vec<u8>,
    at: usize,
    ended: bool,
}

impl Read for ChunkReader {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        while self.at == self.current.len() {
            if self.ended {
                return Ok(0);
            }
            let next = self
                .chunks
                .recv()
                .map_err(|_| std::io::Error::other("the inflating thread stopped"))??;
            if next.is_empty() {
                self.ended = true;
            }
            let spent = std::mem::replace(&mut self.current, next);
            if spent.capacity() > 0 {
                let _ = self.spent.send(spent);
            }
            self.at = 0;
        }
        let count = buf.len().min(self.current.len() - self.at);
        buf[..count].copy_from_slice(&self.current[self.at..self.at + count]);
        self.at += count;
        Ok(count)
    }
}

/// A reader that fails (so the fast reader declines) past a byte budget.
struct LimitedReader<R> {
    inner: R,
    left: u64,
}

impl<R: Read> Read for LimitedReader<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let read = self.inner.read(buf)?;
        if read as u64 > self.left {
            return Err(std::io::Error::other("the part inflates past its limit"));
        }
        self.left -= read as u64;
        Ok(read)
    }
}

/// A cell's value before it goes into the grid.
enum Value {
    Empty,
    Number(f64),
    Date(f64),
    Shared(usize),
    Text(String),
    /// Inline text, held in the reader's text buffer.
    Inline,
    Bool(bool),
    Error(String),
    /// A cell whose content does not fit its type (text in a number cell, a
    /// shared-text index past the table, an unknown type): what it holds,
    /// kept as an unreadable cell at its address rather than refusing the
    /// whole sheet.
    Damaged(String),
}

/// A cell's `t` attribute.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Kind {
    /// No `t`: a number, or text when it does not parse.
    Unstated,
    Number,
    Shared,
    Bool,
    Error,
    FormulaText,
    IsoDate,
    Inline,
    Unknown,
}

impl Kind {
    fn of(attribute: Option<&[u8]>) -> Self {
        match attribute {
            None => Kind::Unstated,
            Some(b"n") => Kind::Number,
            Some(b"s") => Kind::Shared,
            Some(b"b") => Kind::Bool,
            Some(b"e") => Kind::Error,
            Some(b"str") => Kind::FormulaText,
            Some(b"d") => Kind::IsoDate,
            Some(b"inlineStr") | Some(b"is") => Kind::Inline,
            Some(_) => Kind::Unknown,
        }
    }
}

fn read_cells<R: Read>(
    mut scanner: Scanner<R>,
    parts: &WorkbookParts,
    most_cells: u64,
    builder: &mut GridBuilder,
) -> Outcome<FastSheet> {
    let mut hidden = super::merged::Hidden::default();
    // Up to the sheet data; a declared dimension must be well formed, as calamine requires.
    loop {
        match scanner.next()? {
            Token::Start { name, attrs, .. } => match scanner.bytes(name) {
                b"dimension" => {
                    let reference = attribute(scanner.bytes(attrs), b"ref").ok_or(Stop::Decline)?;
                    let pieces: Vec<&[u8]> = reference.split(|byte| *byte == b':').collect();
                    if pieces.len() > 2 {
                        return Err(Stop::Decline);
                    }
                    let mut corners = Vec::with_capacity(2);
                    for piece in pieces {
                        let (row, col) = parse_reference(piece)?;
                        corners.push((row, col.ok_or(Stop::Decline)?));
                    }
                    // Room for the declared area's cells, as far as the part can hold them.
                    let (first, last) = (corners[0], corners[corners.len() - 1]);
                    let declared =
                        (last.0.saturating_sub(first.0) as u64 + 1) * (last.1.saturating_sub(first.1) as u64 + 1);
                    builder.reserve(declared.min(most_cells));
                }
                b"sheetData" => break,
                _ => note_if_hidden(&scanner.buf, name, attrs, &mut hidden),
            },
            Token::Eof => return Err(Stop::Decline),
            _ => {}
        }
    }
    let mut shared_index: Vec<u32> = vec![u32::MAX; parts.strings.len()];
    // The summary function of each shared formula group, by its `si` index.
    let mut shared_functions: Vec<Option<&'static str>> = Vec::new();
    let mut row_index: u32 = 0;
    let mut col_index: u32 = 0;
    let mut text = String::new();
    loop {
        match scanner.next()? {
            Token::Start { name, attrs, .. } if scanner.name_is(name, b"row") => {
                note_if_hidden(&scanner.buf, name, attrs, &mut hidden);
                if let Some(reference) = attribute(scanner.bytes(attrs), b"r") {
                    row_index = parse_reference(reference)?.0;
                }
            }
            Token::End { name } if scanner.name_is(name, b"row") => {
                row_index = row_index.wrapping_add(1);
                col_index = 0;
            }
            Token::Start { name, attrs, .. } if scanner.name_is(name, b"c") => {
                let (row, col, date_style, kind) = {
                    let (reference, style, kind) = cell_attributes(scanner.bytes(attrs))?;
                    let (row, col) = match reference {
                        Some(reference) => {
                            let (row, col) = parse_reference(reference)?;
                            let col = col.ok_or(Stop::Decline)?;
                            (row, col)
                        }
                        None => (row_index, col_index),
                    };
                    let date_style = match style {
                        None => false,
                        Some(style) => parts.date_styles.get(parse_index(style).unwrap_or(0)) == Some(&true),
                    };
                    (row, col, date_style, Kind::of(kind))
                };
                col_index = col;
                let mut value = Value::Empty;
                let mut quick = false;
                if matches!(kind, Kind::Number | Kind::Shared | Kind::Unstated) {
                    if let Some(range) = scanner.plain_v_element() {
                        value = plain_value(scanner.bytes(range), kind, date_style, parts)?;
                        quick = true;
                    }
                } else if kind == Kind::Inline && scanner.plain_inline_element(&mut text)? {
                    value = Value::Inline;
                    quick = true;
                }
                if !quick {
                    loop {
                        match scanner.next()? {
                            Token::Start { name, attrs, empty } => {
                                let child = scanner.bytes(name);
                                if same(child, b"v") {
                                    value = read_v(&mut scanner, kind, date_style, parts, &mut text)?;
                                } else if same(child, b"is") {
                                    text.clear();
                                    if empty {
                                        scanner.next()?;
                                    } else {
                                        scanner.read_string_item(b"is", &mut text)?;
                                    }
                                    value = Value::Inline;
                                } else if same(child, b"f") {
                                    // Summary formulas (AVERAGE, SUM...) are noted; a shared
                                    // formula's followers take their master's function.
                                    let attributes = scanner.bytes(attrs);
                                    let shared = attribute(attributes, b"t") == Some(b"shared".as_slice());
                                    let group = if shared {
                                        attribute(attributes, b"si").and_then(parse_index)
                                    } else {
                                        None
                                    };
                                    let mut function = None;
                                    if empty {
                                        scanner.next()?;
                                        function =
                                            group.and_then(|group| shared_functions.get(group).copied().flatten());
                                    } else {
                                        match scanner.next()? {
                                            Token::Text(range) => {
                                                function = super::summary_function(scanner.bytes(range));
                                                if let Some(group) = group.filter(|group| *group < MAX_SHARED_GROUPS) {
                                                    if shared_functions.len() <= group {
                                                        shared_functions.resize(group + 1, None);
                                                    }
                                                    shared_functions[group] = function;
                                                }
                                                scanner.skip_element(b"f")?;
                                            }
                                            Token::End { name } if scanner.name_is(name, b"f") => {}
                                            Token::Eof => return Err(Stop::Decline),
                                            _ => scanner.skip_element(b"f")?,
                                        }
                                    }
                                    if let Some(function) = function {
                                        builder.note_summary_formula(row, col, function);
                                    }
                                    value = Value::Empty;
                                } else {
                                    return Err(Stop::Decline);
                                }
                            }
                            Token::End { name } if scanner.name_is(name, b"c") => break,
                            Token::Eof => return Err(Stop::Decline),
                            _ => {}
                        }
                    }
                }
                col_index = col_index.wrapping_add(1);
                let cell = match value {
                    Value::Empty => continue,
                    Value::Number(number) => CellValue::Number(number),
                    Value::Date(serial) => CellValue::Date(serial),
                    Value::Bool(flag) => CellValue::Bool(flag),
                    Value::Shared(index) => {
                        let text = &parts.strings[index];
                        if text.is_empty() {
                            continue;
                        }
                        if shared_index[index] == u32::MAX {
                            shared_index[index] = builder.intern(text);
                        }
                        CellValue::Text(shared_index[index])
                    }
                    Value::Text(text) => {
                        if text.is_empty() {
                            continue;
                        }
                        CellValue::Text(builder.intern(&text))
                    }
                    Value::Inline => {
                        if text.is_empty() {
                            continue;
                        }
                        CellValue::Text(builder.intern(&text))
                    }
                    Value::Error(text) => CellValue::Error(builder.intern(&text)),
                    Value::Damaged(what) => CellValue::Error(builder.intern(&what)),
                };
                if !builder.push(row, col, cell) {
                    return Err(Stop::TooManyCells);
                }
            }
            Token::End { name } if scanner.name_is(name, b"sheetData") => break,
            Token::Eof => return Err(Stop::Decline),
            _ => {}
        }
    }
    // Merged areas follow the cell data.
    let mut merged = Vec::new();
    loop {
        match scanner.next()? {
            Token::Start { name, attrs, .. } if scanner.name_is(name, b"mergeCell") => {
                let tag = String::from_utf8_lossy(&scanner.buf[name.0..attrs.1]);
                if let Some(area) = attribute_value(&tag, "ref").and_then(parse_a1_range) {
                    merged.push(area);
                }
            }
            Token::Start { name, attrs, .. } => note_if_hidden(&scanner.buf, name, attrs, &mut hidden),
            Token::Eof => break,
            _ => {}
        }
    }
    hidden.rows.sort_unstable();
    hidden.rows.dedup();
    hidden.cols.sort_unstable();
    hidden.cols.dedup();
    Ok(FastSheet { merged, hidden })
}

/// Reads a `<v>` element (just opened) as calamine reads it for the cell's type.
fn read_v<R: Read>(
    scanner: &mut Scanner<R>,
    kind: Kind,
    date_style: bool,
    parts: &WorkbookParts,
    text: &mut String,
) -> Outcome<Value> {
    match kind {
        Kind::Inline => {
            scanner.skip_element(b"v")?;
            Ok(Value::Empty)
        }
        Kind::Number | Kind::Shared | Kind::Bool | Kind::Error | Kind::Unstated => {
            // Plain ASCII content; anything else is left to calamine.
            let value = match scanner.next()? {
                Token::Text(range) => plain_value(scanner.bytes(range), kind, date_style, parts)?,
                Token::End { name } if scanner.name_is(name, b"v") => return Ok(Value::Empty),
                _ => return Err(Stop::Decline),
            };
            match scanner.next()? {
                Token::End { name } if scanner.name_is(name, b"v") => Ok(value),
                _ => Err(Stop::Decline),
            }
        }
        Kind::FormulaText => {
            text.clear();
            scanner.read_text_content(b"v", text)?;
            if text.contains("_x") {
                return Err(Stop::Decline);
            }
            Ok(Value::Inline)
        }
        Kind::IsoDate => {
            text.clear();
            scanner.read_text_content(b"v", text)?;
            Ok(Value::Date(f64::NAN))
        }
        Kind::Unknown => {
            text.clear();
            scanner.read_text_content(b"v", text)?;
            Ok(Value::Damaged(format!(
                "a cell of a type this reader does not know, holding {}",
                shown(text)
            )))
        }
    }
}

/// Cell content as quoted in an unreadable cell's description (at most 40 characters).
fn shown(content: &str) -> String {
    let mut quoted: String = content.chars().take(40).collect();
    if quoted.len() < content.len() {
        quoted.push('…');
    }
    format!("\"{quoted}\"")
}

/// The value of a `<v>` holding plain text, for the types that hold no markup.
fn plain_value(bytes: &[u8], kind: Kind, date_style: bool, parts: &WorkbookParts) -> Outcome<Value> {
    if bytes.contains(&b'&') && kind == Kind::Unstated {
        // Text with character references: calamine decodes them.
        return Err(Stop::Decline);
    }
    let raw = || shown(&String::from_utf8_lossy(bytes));
    match kind {
        Kind::Shared => {
            if bytes.is_empty() {
                return Ok(Value::Empty);
            }
            match parse_index(bytes) {
                Some(index) if index < parts.strings.len() => Ok(Value::Shared(index)),
                _ => Ok(Value::Damaged(format!(
                    "a shared-text cell pointing to entry {} of a table of {}",
                    raw(),
                    parts.strings.len()
                ))),
            }
        }
        Kind::Bool => match bytes_str(bytes)?.trim() {
            "" => Ok(Value::Empty),
            flag if flag == "0" || flag.eq_ignore_ascii_case("false") => Ok(Value::Bool(false)),
            flag if flag == "1" || flag.eq_ignore_ascii_case("true") => Ok(Value::Bool(true)),
            _ => Ok(Value::Damaged(format!("a TRUE/FALSE cell holding {}", raw()))),
        },
        Kind::Error => {
            let text = bytes_str(bytes)?.trim();
            match text.parse::<calamine::CellErrorType>() {
                Ok(error) => Ok(Value::Error(error.to_string())),
                // Newer error values (#SPILL!, #CALC!, #FIELD!, #BLOCKED!,
                // #UNKNOWN!, #GETTING_DATA, ...) that calamine does not know
                // are error cells at their address all the same.
                Err(_) if is_error_value_text(text) => Ok(Value::Error(text.to_string())),
                Err(_) => Ok(Value::Damaged(format!("an error cell holding {}", raw()))),
            }
        }
        _ => {
            if bytes.is_empty() {
                return Ok(Value::Empty);
            }
            match fast_float2::parse::<f64, _>(bytes) {
                Ok(number) if date_style => Ok(Value::Date(number)),
                Ok(number) => Ok(Value::Number(number)),
                Err(_) if kind == Kind::Unstated => Ok(Value::Text(bytes_str(bytes)?.to_string())),
                Err(_) => Ok(Value::Damaged(format!("a number cell holding {}", raw()))),
            }
        }
    }
}

/// True for text shaped like a spreadsheet error value: `#`, then up to 30
/// letters, digits, `_`, `/`, `!` or `?` (`#SPILL!`, `#GETTING_DATA`).
pub(crate) fn is_error_value_text(text: &str) -> bool {
    text.strip_prefix('#').is_some_and(|rest| {
        !rest.is_empty()
            && rest.len() <= 30
            && rest
                .chars()
                .all(|character| character.is_ascii_alphanumeric() || matches!(character, '_' | '/' | '!' | '?'))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn date_formats_are_told_from_number_formats() {
        // Common practice for number format codes (ECMA-376 Part 1, 18.8.31).
        for code in [
            "yyyy-mm-dd",
            "d/m/yy",
            "DD/MM/YY",
            "h:mm:ss;@",
            "[h]:mm:ss",
            "[mm]:ss",
            "mmm-yy",
            "[$-409]d-mmm-yyyy",
            "h:mm AM/PM",
            "[Red]yyyy",
        ] {
            assert!(is_date_format(code), "{code}");
        }
        for code in [
            "General",
            "0.00",
            "#,##0.00;[Red]-#,##0.00",
            "0.00E+00",
            "\"days\" 0",
            "0\\ \\h",
            "[Red]0.0",
            "[>100]0;0.00",
            "_(* #,##0_)",
            "@",
            "0;\"d\"",
        ] {
            assert!(!is_date_format(code), "{code}");
        }
    }

    #[test]
    fn references_parse_like_the_sheet_format() {
        assert_eq!(parse_reference(b"A1").ok(), Some((0, Some(0))));
        assert_eq!(parse_reference(b"xfd1048576").ok(), Some((1_048_575, Some(16_383))));
        assert_eq!(parse_reference(b"17").ok(), Some((16, None)));
        assert!(parse_reference(b"A0").is_err());
        assert!(parse_reference(b"$A$1").is_err());
        assert!(parse_reference(b"1A").is_err());
    }

    #[test]
    fn text_decoding() {
        let mut out = String::new();
        decode_text(b"a &amp; b &lt;&#65;&#x42;&gt;\r\nc\rd", &mut out).ok();
        assert_eq!(out, "a & b <AB>\nc\nd");
        assert!(decode_text(b"&nbsp;", &mut String::new()).is_err());
    }

    #[test]
    fn scanner_handles_quotes_comments_and_split_reads() {
        // A reader that hands out one byte at a time exercises every refill.
        struct Trickle<'a>(&'a [u8]);
        impl Read for Trickle<'_> {
            fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
                if self.0.is_empty() || buf.is_empty() {
                    return Ok(0);
                }
                buf[0] = self.0[0];
                self.0 = &self.0[1..];
                Ok(1)
            }
        }
        let xml = br#"<?xml version="1.0"?><a k="x>y"><!-- <b> -- > --><b/>t<![CDATA[<z>]]></a>"#;
        let mut scanner = Scanner::new(Trickle(xml));
        let mut seen = Vec::new();
        loop {
            let token = scanner.next().expect("well formed");
            let text = match token {
                Token::Start { name, attrs, empty } => format!(
                    "S:{}:{}:{empty}",
                    String::from_utf8_lossy(scanner.bytes(name)),
                    String::from_utf8_lossy(scanner.bytes(attrs)).trim()
                ),
                Token::End { name } => format!("E:{}", String::from_utf8_lossy(scanner.bytes(name))),
                Token::Text(range) => format!("T:{}", String::from_utf8_lossy(scanner.bytes(range))),
                Token::CData(range) => format!("C:{}", String::from_utf8_lossy(scanner.bytes(range))),
                Token::Eof => break,
            };
            seen.push(text);
        }
        assert_eq!(seen, ["S:a:k=\"x>y\":false", "S:b::true", "E:b", "T:t", "C:<z>", "E:a"]);
    }
}
