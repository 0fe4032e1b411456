//! Positions in user files: byte offsets to 1-based lines and columns.

use std::fmt;

/// A place in a user file, printed `file:line:column` (line and column 1-based).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Location {
    /// File name as the user knows it (relative to the case folder).
    pub file: String,
    /// 1-based physical line, when known.
    pub line: Option<usize>,
    /// 1-based column (characters), when known.
    pub column: Option<usize>,
}

impl Location {
    /// The whole file.
    pub fn file(file: &str) -> Location {
        Location { file: file.into(), line: None, column: None }
    }

    /// A line of a file.
    pub fn line(file: &str, line: usize) -> Location {
        Location { file: file.into(), line: Some(line), column: None }
    }

    /// The location of a byte offset in `text`.
    pub fn at_offset(file: &str, text: &str, offset: usize) -> Location {
        let offset = offset.min(text.len());
        let before = &text[..floor_char_boundary(text, offset)];
        let line = before.matches('\n').count() + 1;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let column = before[line_start..].chars().count() + 1;
        Location { file: file.into(), line: Some(line), column: Some(column) }
    }
}

/// Characters of user text quoted in a message before it is cut short.
pub const EXCERPT_CHARS: usize = 40;

/// User text as quoted in messages and findings: control characters escaped (so a message
/// never moves the terminal's cursor), and text longer than [`EXCERPT_CHARS`] cut with its
/// length given, so a 40 MB cell never floods the terminal, `results.json` or the document.
pub fn excerpt(text: &str) -> String {
    let mut shown = String::new();
    for c in text.chars().take(EXCERPT_CHARS) {
        if c.is_control() {
            shown.extend(c.escape_default());
        } else {
            shown.push(c);
        }
    }
    let total = text.chars().count();
    if total > EXCERPT_CHARS {
        shown.push_str(&format!("… ({total} characters)"));
    }
    shown
}

fn floor_char_boundary(text: &str, mut offset: usize) -> usize {
    while !text.is_char_boundary(offset) {
        offset -= 1;
    }
    offset
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(column) = self.column {
                write!(f, ":{column}")?;
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn offsets_become_lines_and_columns() {
        let text = "a = 1\nbé = 2\n";
        assert_eq!(Location::at_offset("x.toml", text, 0).to_string(), "x.toml:1:1");
        assert_eq!(Location::at_offset("x.toml", text, 10).to_string(), "x.toml:2:4");
        assert_eq!(Location::line("x.csv", 3).to_string(), "x.csv:3");
    }

    #[test]
    fn excerpts_cut_long_text_and_escape_controls() {
        assert_eq!(excerpt("152/156"), "152/156");
        assert_eq!(excerpt("a\u{1b}[2Jb"), "a\\u{1b}[2Jb");
        let long = "A".repeat(41);
        assert_eq!(excerpt(&long), format!("{}… (41 characters)", "A".repeat(40)));
        assert_eq!(excerpt(&"é".repeat(40)), "é".repeat(40), "characters, not bytes, are counted");
    }
}
