//! Text tables shared by the readers: encoding checks, delimiter detection, records with lines.

use crate::data::DataError;
use crate::data::limits::{Limited, exceeds};
use crate::source::{Location, excerpt};

/// A delimited text table: its header and records, each with its 1-based physical line.
#[derive(Debug)]
pub struct DelimitedText {
    /// Header cells, trimmed.
    pub header: Vec<String>,
    /// Records after the header: (line, cells trimmed).
    pub records: Vec<(usize, Vec<String>)>,
    /// The delimiter found.
    pub delimiter: u8,
}

/// Decodes `bytes` as UTF-8 text (BOM dropped), refusing NUL bytes and invalid UTF-8 by line.
///
/// # Errors
/// [`DataError::Empty`], [`DataError::Binary`] or [`DataError::NotUtf8`].
pub fn decode<'b>(file: &str, bytes: &'b [u8]) -> Result<&'b str, DataError> {
    if bytes.starts_with(b"\xFF\xFE") || bytes.starts_with(b"\xFE\xFF") {
        // A UTF-16 byte-order mark: the help (save as UTF-8) fits better than "NUL bytes".
        return Err(DataError::NotUtf8 { at: Location::line(file, 1) });
    }
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(DataError::Empty { file: file.into() });
    }
    if let Some(at) = bytes.iter().position(|&b| b == 0) {
        return Err(DataError::Binary { at: line_of(file, bytes, at) });
    }
    match std::str::from_utf8(bytes) {
        Ok(text) => Ok(text),
        Err(e) => Err(DataError::NotUtf8 { at: line_of(file, bytes, e.valid_up_to()) }),
    }
}

fn line_of(file: &str, bytes: &[u8], offset: usize) -> Location {
    Location::line(file, bytes[..offset].iter().filter(|&&b| b == b'\n').count() + 1)
}

/// The most frequent of comma, semicolon and tab on the header line (outside quotes); comma
/// when none appears.
pub fn detect_delimiter(text: &str) -> u8 {
    let header = text.lines().next().unwrap_or("");
    let mut counts = [(b',', 0usize), (b';', 0), (b'\t', 0)];
    let mut quoted = false;
    for c in header.bytes() {
        if c == b'"' {
            quoted = !quoted;
        } else if !quoted {
            if let Some(entry) = counts.iter_mut().find(|(d, _)| *d == c) {
                entry.1 += 1;
            }
        }
    }
    // Ties go to the earlier entry (comma first), so the choice is deterministic.
    counts.iter().rev().max_by_key(|(_, n)| *n).filter(|(_, n)| *n > 0).map_or(b',', |(d, _)| *d)
}

/// Splits decoded text into header and records, checking that every row has the header's width.
///
/// # Errors
/// [`DataError::Csv`] for malformed quoting, [`DataError::Ragged`] for a row of another width,
/// [`DataError::TooLarge`] past [`crate::data::limits::MAX_GENOTYPES`] cells in all.
pub fn split_records(file: &str, text: &str) -> Result<DelimitedText, DataError> {
    let mut records = Vec::new();
    let shape = visit_records(file, text, |row| {
        records.push((row.line, row.cells().map(str::to_string).collect()));
        Ok(())
    })?;
    Ok(DelimitedText { header: shape.header, records, delimiter: shape.delimiter })
}

/// The header and size of a delimited table, from [`visit_records`].
#[derive(Debug)]
pub struct Shape {
    /// Header cells, trimmed.
    pub header: Vec<String>,
    /// Records after the header (blank lines not counted).
    pub records: usize,
    /// The delimiter found.
    pub delimiter: u8,
}

/// One record after the header, borrowed from the reader: its 1-based physical line and its
/// cells, each trimmed. It has exactly the header's width.
pub struct Row<'r> {
    /// Line of the record's first byte.
    pub line: usize,
    record: &'r csv::StringRecord,
}

impl Row<'_> {
    /// The trimmed cell in column `column` (0-based; empty past the last column).
    pub fn cell(&self, column: usize) -> &str {
        self.record.get(column).map_or("", trim)
    }

    /// The trimmed cells in column order.
    pub fn cells(&self) -> impl Iterator<Item = &str> {
        self.record.iter().map(trim)
    }
}

/// Reads decoded text record by record, without keeping any: checks every record as
/// [`split_records`] does (blank lines skipped, the header's width, the cell limit) and hands
/// each record after the header to `visit` in file order. Stops at the first error, a
/// structural one or one `visit` returns.
///
/// # Errors
/// As [`split_records`], and whatever `visit` returns.
pub fn visit_records(
    file: &str,
    text: &str,
    mut visit: impl FnMut(Row<'_>) -> Result<(), DataError>,
) -> Result<Shape, DataError> {
    let delimiter = detect_delimiter(text);
    let mut reader =
        csv::ReaderBuilder::new().has_headers(false).flexible(true).delimiter(delimiter).from_reader(text.as_bytes());
    let mut lines = LineCounter::new(text.as_bytes());
    let mut header: Option<Vec<String>> = None;
    let mut records = 0usize;
    let mut cells_read: u64 = 0;
    let mut record = csv::StringRecord::new();
    loop {
        match reader.read_record(&mut record) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => return Err(csv_error(file, &e, &mut lines)),
        }
        let line = record.position().map_or(1, |p| lines.line_at(p.byte()));
        cells_read += record.len() as u64;
        if exceeds(Limited::Cells, cells_read) {
            return Err(DataError::TooLarge {
                at: Location::line(file, line),
                what: Limited::Cells,
                found: cells_read,
            });
        }
        if record.iter().all(|c| trim(c).is_empty()) {
            continue; // blank line
        }
        match &header {
            None => header = Some(record.iter().map(|c| trim(c).to_string()).collect()),
            Some(h) if h.len() != record.len() => {
                return Err(DataError::Ragged {
                    at: Location::line(file, line),
                    expected: h.len(),
                    found: record.len(),
                });
            }
            Some(_) => {
                records += 1;
                visit(Row { line, record: &record })?;
            }
        }
    }
    let header = header.ok_or_else(|| DataError::Empty { file: file.into() })?;
    Ok(Shape { header, records, delimiter })
}

/// `str::trim`, with a shortcut for text that starts and ends with a visible ASCII character
/// (no Unicode white space is ASCII above the space).
pub fn trim(text: &str) -> &str {
    match (text.as_bytes().first(), text.as_bytes().last()) {
        (Some(&first), Some(&last)) if (b'!'..=b'~').contains(&first) && (b'!'..=b'~').contains(&last) => text,
        _ => text.trim(),
    }
}

/// Physical lines of byte offsets met in increasing order (record starts, then an error's
/// position), counted once over the text.
struct LineCounter<'t> {
    bytes: &'t [u8],
    /// Offset up to which line breaks are counted.
    offset: usize,
    /// Line breaks before `offset`.
    breaks: usize,
}

impl<'t> LineCounter<'t> {
    fn new(bytes: &'t [u8]) -> Self {
        LineCounter { bytes, offset: 0, breaks: 0 }
    }

    /// The line of the first byte at or after `byte` that is not a line break: the csv crate's
    /// positions include the line breaks (and blank lines) before a record.
    fn line_at(&mut self, byte: u64) -> usize {
        let mut at = usize::try_from(byte).unwrap_or(usize::MAX).min(self.bytes.len());
        while at < self.bytes.len() && matches!(self.bytes[at], b'\r' | b'\n') {
            at += 1;
        }
        if at < self.offset {
            // Not expected (positions only grow); count from the start rather than misnumber.
            self.offset = 0;
            self.breaks = 0;
        }
        self.breaks += self.bytes[self.offset..at].iter().filter(|&&b| b == b'\n').count();
        self.offset = at;
        self.breaks + 1
    }
}

/// The first header cells as a message shows them: six at most, each cut short.
pub fn header_excerpt(header: &[String]) -> String {
    let shown: Vec<String> = header.iter().take(6).map(|h| excerpt(h)).collect();
    if header.len() > 6 { format!("{}, …", shown.join(", ")) } else { shown.join(", ") }
}

fn csv_error(file: &str, error: &csv::Error, lines: &mut LineCounter<'_>) -> DataError {
    let line = error.position().map_or(1, |p| lines.line_at(p.byte()));
    DataError::Csv { at: Location::line(file, line), message: error.to_string() }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn detects_delimiters() {
        assert_eq!(detect_delimiter("sample;population;year\n"), b';');
        assert_eq!(detect_delimiter("sample\tpopulation\tyear\n"), b'\t');
        assert_eq!(detect_delimiter("sample,population,year\n"), b',');
        assert_eq!(detect_delimiter("\"a;b\",c,d\n"), b',');
        assert_eq!(detect_delimiter("single\n"), b',');
    }

    #[test]
    fn decodes_bom_and_refuses_binary() {
        assert_eq!(decode("f.csv", b"\xEF\xBB\xBFa,b\n").unwrap(), "a,b\n");
        assert_eq!(
            decode("f.csv", b"a\nb\x00\n").unwrap_err().to_string().lines().next().unwrap(),
            "f.csv:2: the file contains NUL bytes, so it is not a text table"
        );
        assert!(matches!(decode("f.csv", b"a\n\xff\n"), Err(DataError::NotUtf8 { .. })));
        assert!(
            matches!(decode("f.csv", b"\xff\xfea\x00,\x00"), Err(DataError::NotUtf8 { .. })),
            "UTF-16 is named as such"
        );
        assert!(matches!(decode("f.csv", b"  \n"), Err(DataError::Empty { .. })));
    }

    #[test]
    fn splits_records_with_physical_lines() {
        let t = split_records("f.csv", "a,b\r\n1,2\r\n\r\n3,4\r\n").unwrap();
        assert_eq!(t.header, vec!["a", "b"]);
        assert_eq!(
            t.records,
            vec![(2, vec!["1".to_string(), "2".to_string()]), (4, vec!["3".to_string(), "4".to_string()])]
        );
        let err = split_records("f.csv", "a,b\n1,2\n3\n").unwrap_err();
        assert_eq!(
            err.to_string().lines().next().unwrap(),
            "f.csv:3: the row has 1 cells but the header has 2 columns"
        );
    }
}
