//! Reader (and a small writer) for characterization data in the CGATS.17
//! text format (ISO 28178:2009, "Graphic technology — Exchange format for
//! colour and process control data using XML or ASCII text").
//!
//! A file starts with an identifier line (e.g. `CGATS.17`), then keyword
//! lines (`KEYWORD value`, values quoted when they hold spaces, `#` starts a
//! comment), `NUMBER_OF_FIELDS n`, a `BEGIN_DATA_FORMAT … END_DATA_FORMAT`
//! block naming the columns, `NUMBER_OF_SETS n` and a `BEGIN_DATA … END_DATA`
//! block of values. Several tables may follow each other. Every error names
//! the file and the line.

use crate::error::{Error, Result};
use std::path::Path;

/// One table of a CGATS file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CgatsTable {
    /// Keywords in file order (name, value without quotes).
    pub keywords: Vec<(String, String)>,
    /// Column names from the data format block.
    pub fields: Vec<String>,
    /// Rows of values (each as many as `fields`).
    pub rows: Vec<Vec<String>>,
    /// Line (1-based) where each row starts.
    pub row_lines: Vec<usize>,
}

/// A parsed CGATS file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CgatsFile {
    /// The first token of the file (e.g. `CGATS.17`).
    pub identifier: String,
    pub tables: Vec<CgatsTable>,
}

impl CgatsTable {
    /// Column index of a field (case-insensitive).
    pub fn column(&self, name: &str) -> Option<usize> {
        self.fields.iter().position(|f| f.eq_ignore_ascii_case(name))
    }

    /// A keyword's value (case-insensitive name).
    pub fn keyword(&self, name: &str) -> Option<&str> {
        self.keywords
            .iter()
            .find(|(k, _)| k.eq_ignore_ascii_case(name))
            .map(|(_, v)| v.as_str())
    }

    /// The number in row `row`, column `col`, with an error naming file, line and field.
    pub fn number(&self, path: &Path, row: usize, col: usize) -> Result<f64> {
        let text = &self.rows[row][col];
        match text.parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(v),
            _ => Err(Error::input(
                path,
                format!("line {}: field {}: `{text}` is not a number", self.row_lines[row], self.fields[col]),
            )),
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
struct Token {
    text: String,
    quoted: bool,
}

/// Splits one line into tokens: whitespace separates, double quotes enclose
/// (a doubled quote inside is a literal quote), `#` outside quotes comments.
fn tokenize(line: &str, number: usize, path: &Path) -> Result<Vec<Token>> {
    let mut tokens = Vec::new();
    let mut chars = line.chars().peekable();
    while let Some(&c) = chars.peek() {
        if c.is_whitespace() {
            chars.next();
        } else if c == '#' {
            break;
        } else if c == '"' {
            chars.next();
            let mut text = String::new();
            loop {
                match chars.next() {
                    Some('"') if chars.peek() == Some(&'"') => {
                        chars.next();
                        text.push('"');
                    }
                    Some('"') => break,
                    Some(ch) => text.push(ch),
                    None => return Err(Error::input(path, format!("line {number}: unterminated quoted string"))),
                }
            }
            tokens.push(Token { text, quoted: true });
        } else {
            let mut text = String::new();
            while let Some(&ch) = chars.peek() {
                if ch.is_whitespace() || ch == '"' || ch == '#' {
                    break;
                }
                text.push(ch);
                chars.next();
            }
            tokens.push(Token { text, quoted: false });
        }
    }
    Ok(tokens)
}

fn is(token: &Token, word: &str) -> bool {
    !token.quoted && token.text.eq_ignore_ascii_case(word)
}

enum State {
    Header,
    Format {
        start: usize,
    },
    Data {
        start: usize,
        pending: Vec<(usize, String)>,
        line_mode: Option<bool>,
    },
}

/// Parses CGATS.17 text; `path` names the file in errors.
pub fn parse(text: &str, path: &Path) -> Result<CgatsFile> {
    let err = |line: usize, msg: String| Error::input(path, format!("line {line}: {msg}"));
    let mut file = CgatsFile::default();
    let mut table = CgatsTable::default();
    let mut declared_fields: Option<(usize, usize)> = None;
    let mut declared_sets: Option<(usize, usize)> = None;
    let mut state = State::Header;
    let mut seen_identifier = false;

    for (i, raw) in text.lines().enumerate() {
        let line_no = i + 1;
        let tokens = tokenize(raw, line_no, path)?;
        if tokens.is_empty() {
            continue;
        }
        if !seen_identifier {
            if tokens[0].quoted {
                return Err(err(line_no, "the file must start with an identifier such as CGATS.17".into()));
            }
            file.identifier = tokens[0].text.clone();
            seen_identifier = true;
            continue;
        }
        match &mut state {
            State::Header => {
                let key = &tokens[0];
                if key.quoted {
                    return Err(err(line_no, format!("expected a keyword, found the string \"{}\"", key.text)));
                }
                let int_value = |name: &str| -> Result<usize> {
                    let v = tokens.get(1).ok_or_else(|| err(line_no, format!("{name} needs a value")))?;
                    v.text
                        .parse::<usize>()
                        .map_err(|_| err(line_no, format!("{name}: `{}` is not a whole number", v.text)))
                };
                if is(key, "BEGIN_DATA_FORMAT") {
                    table.fields.extend(tokens[1..].iter().map(|t| t.text.clone()));
                    state = State::Format { start: line_no };
                } else if is(key, "BEGIN_DATA") {
                    if table.fields.is_empty() {
                        return Err(err(
                            line_no,
                            "BEGIN_DATA before any BEGIN_DATA_FORMAT block naming the fields".into(),
                        ));
                    }
                    let pending: Vec<(usize, String)> = tokens[1..].iter().map(|t| (line_no, t.text.clone())).collect();
                    let line_mode = if pending.is_empty() { None } else { Some(false) };
                    state = State::Data {
                        start: line_no,
                        pending,
                        line_mode,
                    };
                } else if is(key, "NUMBER_OF_FIELDS") {
                    declared_fields = Some((int_value("NUMBER_OF_FIELDS")?, line_no));
                } else if is(key, "NUMBER_OF_SETS") {
                    declared_sets = Some((int_value("NUMBER_OF_SETS")?, line_no));
                } else if is(key, "END_DATA") || is(key, "END_DATA_FORMAT") {
                    return Err(err(line_no, format!("{} without a matching BEGIN", key.text)));
                } else {
                    let value = tokens[1..].iter().map(|t| t.text.as_str()).collect::<Vec<_>>().join(" ");
                    table.keywords.push((key.text.clone(), value));
                }
            }
            State::Format { start } => {
                let start = *start;
                for (j, t) in tokens.iter().enumerate() {
                    if is(t, "END_DATA_FORMAT") {
                        if j + 1 != tokens.len() {
                            return Err(err(line_no, "text after END_DATA_FORMAT".into()));
                        }
                        if table.fields.is_empty() {
                            return Err(err(start, "the data format block names no fields".into()));
                        }
                        if let Some((n, at)) = declared_fields
                            && n != table.fields.len()
                        {
                            return Err(err(
                                at,
                                format!("NUMBER_OF_FIELDS is {n} but the data format block names {}", table.fields.len()),
                            ));
                        }
                        state = State::Header;
                        break;
                    }
                    if is(t, "BEGIN_DATA") || is(t, "END_DATA") {
                        return Err(err(
                            line_no,
                            format!("{} inside the data format block (missing END_DATA_FORMAT?)", t.text),
                        ));
                    }
                    table.fields.push(t.text.clone());
                }
            }
            State::Data { start, pending, line_mode } => {
                let start = *start;
                let mut end = false;
                for (j, t) in tokens.iter().enumerate() {
                    if is(t, "END_DATA") {
                        if j + 1 != tokens.len() {
                            return Err(err(line_no, "text after END_DATA".into()));
                        }
                        end = true;
                        break;
                    }
                    if is(t, "BEGIN_DATA") || is(t, "BEGIN_DATA_FORMAT") {
                        return Err(err(line_no, format!("{} inside a data block (missing END_DATA?)", t.text)));
                    }
                    pending.push((line_no, t.text.clone()));
                }
                // Sets normally sit one per line: when the first line of the
                // block holds exactly one set, every line must, so a short or
                // long set is reported at its own line.
                let on_line = pending.iter().filter(|(l, _)| *l == line_no).count();
                if on_line > 0 {
                    let width = table.fields.len();
                    if line_mode.is_none() {
                        *line_mode = Some(on_line == width);
                    }
                    if *line_mode == Some(true) && on_line != width {
                        return Err(err(
                            line_no,
                            format!("{on_line} values in this data set, but the data format block names {width} fields"),
                        ));
                    }
                }
                if end {
                    let values = std::mem::take(pending);
                    let width = table.fields.len();
                    if values.len() % width != 0 {
                        let last = values.last().map(|(l, _)| *l).unwrap_or(start);
                        return Err(err(
                            last,
                            format!(
                                "{} values in the data block is not a whole number of sets of {width} fields",
                                values.len()
                            ),
                        ));
                    }
                    for chunk in values.chunks(width) {
                        table.row_lines.push(chunk[0].0);
                        table.rows.push(chunk.iter().map(|(_, v)| v.clone()).collect());
                    }
                    if let Some((n, at)) = declared_sets
                        && n != table.rows.len()
                    {
                        return Err(err(
                            at,
                            format!("NUMBER_OF_SETS is {n} but the data block holds {} sets", table.rows.len()),
                        ));
                    }
                    file.tables.push(std::mem::take(&mut table));
                    declared_fields = None;
                    declared_sets = None;
                    state = State::Header;
                }
            }
        }
    }
    match state {
        State::Header => {}
        State::Format { start } => return Err(err(start, "BEGIN_DATA_FORMAT without END_DATA_FORMAT".into())),
        State::Data { start, .. } => return Err(err(start, "BEGIN_DATA without END_DATA".into())),
    }
    if !seen_identifier {
        return Err(Error::input(path, "empty file: no CGATS identifier line"));
    }
    if file.tables.is_empty() {
        return Err(Error::input(
            path,
            "no data table (BEGIN_DATA_FORMAT … END_DATA_FORMAT, BEGIN_DATA … END_DATA)",
        ));
    }
    Ok(file)
}

/// Reads and parses a CGATS file.
pub fn read(path: &Path) -> Result<CgatsFile> {
    let bytes = std::fs::read(path).map_err(|e| Error::input(path, format!("cannot read: {}", crate::error::io_reason(&e))))?;
    let text = String::from_utf8_lossy(&bytes);
    parse(&text, path)
}

/// Quotes a value when it needs it (spaces, quotes, `#`, or empty).
fn quote(v: &str) -> String {
    if v.is_empty() || v.chars().any(|c| c.is_whitespace() || c == '"' || c == '#') {
        format!("\"{}\"", v.replace('"', "\"\""))
    } else {
        v.to_string()
    }
}

/// CGATS.17 text for one table (keyword values that are not numbers are quoted).
pub fn to_text(identifier: &str, table: &CgatsTable) -> String {
    let mut s = format!("{identifier}\n");
    for (k, v) in &table.keywords {
        if v.parse::<f64>().is_ok() {
            s.push_str(&format!("{k}\t{v}\n"));
        } else {
            s.push_str(&format!("{k}\t\"{}\"\n", v.replace('"', "\"\"")));
        }
    }
    s.push_str(&format!("NUMBER_OF_FIELDS\t{}\nBEGIN_DATA_FORMAT\n", table.fields.len()));
    s.push_str(&table.fields.join("\t"));
    s.push_str(&format!("\nEND_DATA_FORMAT\nNUMBER_OF_SETS\t{}\nBEGIN_DATA\n", table.rows.len()));
    for row in &table.rows {
        s.push_str(&row.iter().map(|v| quote(v)).collect::<Vec<_>>().join("\t"));
        s.push('\n');
    }
    s.push_str("END_DATA\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    const SMALL: &str = "CGATS.17\nORIGINATOR\t\"test bench\"\n# a comment\nNUMBER_OF_FIELDS 3\nBEGIN_DATA_FORMAT\nSAMPLE_ID SAMPLE_NAME LAB_L\nEND_DATA_FORMAT\nNUMBER_OF_SETS 2\nBEGIN_DATA\n1 \"A 1\" 95.0\n2 \"say \"\"hi\"\"\" 50 # note\nEND_DATA\n";

    #[test]
    fn parses_keywords_fields_and_quoted_values() {
        let f = parse(SMALL, Path::new("t.txt")).unwrap();
        assert_eq!(f.identifier, "CGATS.17");
        let t = &f.tables[0];
        assert_eq!(t.keyword("originator"), Some("test bench"));
        assert_eq!(t.fields, ["SAMPLE_ID", "SAMPLE_NAME", "LAB_L"]);
        assert_eq!(t.rows[0], ["1", "A 1", "95.0"]);
        assert_eq!(t.rows[1][1], "say \"hi\"");
        assert_eq!(t.row_lines, [10, 11]);
    }

    #[test]
    fn writer_output_parses_back() {
        let f = parse(SMALL, Path::new("t.txt")).unwrap();
        let back = parse(&to_text("CGATS.17", &f.tables[0]), Path::new("u.txt")).unwrap();
        assert_eq!(back.tables[0].rows, f.tables[0].rows);
        assert_eq!(back.tables[0].fields, f.tables[0].fields);
    }
}
