//! How popgauge writes its JSON files: indented for reading, except that an array inside an
//! array (a table row in `results.json`) stays on one line.
//!
//! Plain indentation puts every cell of a table on a line of its own: a SNP panel's per-locus
//! tables (240,000 rows) then make a `results.json` of about 200 MB, most of it spaces. One
//! line per row keeps the file readable and diffable at about a third of that size.

use std::io;

use serde::Serialize;
use serde_json::ser::{CompactFormatter, Formatter, PrettyFormatter};

/// `value` as indented JSON with arrays nested in arrays written compactly, and a final line
/// break.
///
/// # Errors
/// Whatever serialising `value` reports (popgauge's own result types always serialise).
pub fn to_json_bytes<T: Serialize + ?Sized>(value: &T) -> Result<Vec<u8>, serde_json::Error> {
    let mut bytes = Vec::new();
    let mut serializer = serde_json::Serializer::with_formatter(&mut bytes, RowsOnOneLine::default());
    value.serialize(&mut serializer)?;
    bytes.push(b'\n');
    Ok(bytes)
}

/// A [`PrettyFormatter`] that switches to [`CompactFormatter`] inside an array that is itself
/// an element of an array.
#[derive(Default)]
struct RowsOnOneLine {
    pretty: PrettyFormatter<'static>,
    /// Open containers, innermost last: `true` for an array.
    open: Vec<bool>,
    /// Depth in `open` at which compact writing began, if it has.
    compact_from: Option<usize>,
}

impl RowsOnOneLine {
    fn compact(&self) -> bool {
        self.compact_from.is_some()
    }

    /// Records a container being opened; returns whether it is written compactly.
    fn open(&mut self, array: bool) -> bool {
        if self.compact_from.is_none() && array && self.open.last() == Some(&true) {
            self.compact_from = Some(self.open.len());
        }
        self.open.push(array);
        self.compact()
    }

    /// Records a container being closed; returns whether it was written compactly.
    fn close(&mut self) -> bool {
        let compact = self.compact();
        self.open.pop();
        if self.compact_from == Some(self.open.len()) {
            self.compact_from = None;
        }
        compact
    }
}

/// Sends one formatter call to the compact or the pretty formatter, whichever is in force.
macro_rules! either {
    ($self:ident, $method:ident ( $($arg:expr),* )) => {
        if $self.compact() { CompactFormatter.$method($($arg),*) } else { $self.pretty.$method($($arg),*) }
    };
}

impl Formatter for RowsOnOneLine {
    fn begin_array<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        if self.open(true) { CompactFormatter.begin_array(writer) } else { self.pretty.begin_array(writer) }
    }

    fn end_array<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        if self.close() { CompactFormatter.end_array(writer) } else { self.pretty.end_array(writer) }
    }

    fn begin_array_value<W: ?Sized + io::Write>(&mut self, writer: &mut W, first: bool) -> io::Result<()> {
        either!(self, begin_array_value(writer, first))
    }

    fn end_array_value<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        either!(self, end_array_value(writer))
    }

    fn begin_object<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        if self.open(false) { CompactFormatter.begin_object(writer) } else { self.pretty.begin_object(writer) }
    }

    fn end_object<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        if self.close() { CompactFormatter.end_object(writer) } else { self.pretty.end_object(writer) }
    }

    fn begin_object_key<W: ?Sized + io::Write>(&mut self, writer: &mut W, first: bool) -> io::Result<()> {
        either!(self, begin_object_key(writer, first))
    }

    fn begin_object_value<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        either!(self, begin_object_value(writer))
    }

    fn end_object_value<W: ?Sized + io::Write>(&mut self, writer: &mut W) -> io::Result<()> {
        either!(self, end_object_value(writer))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Expected layout written by hand: objects and arrays of objects indented as
    /// `serde_json::to_vec_pretty` does (two spaces), rows of a table on one line each.
    #[test]
    fn rows_stay_on_one_line_and_everything_else_is_indented() {
        let value = serde_json::json!({
            "steps": [{"id": "qc", "rows": [["A", 2019, [1, 2]], ["B", null, {"x": 1}]], "list": [1, 2]}]
        });
        let text = String::from_utf8(to_json_bytes(&value).unwrap()).unwrap();
        let expected = r#"{
  "steps": [
    {
      "id": "qc",
      "rows": [
        ["A",2019,[1,2]],
        ["B",null,{"x":1}]
      ],
      "list": [
        1,
        2
      ]
    }
  ]
}
"#;
        assert_eq!(text, expected);
        let back: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert_eq!(back, value, "the same JSON value");
    }

    #[test]
    fn empty_containers_match_the_pretty_form() {
        let value = serde_json::json!({"rows": [[], []], "empty": {}, "none": []});
        let text = String::from_utf8(to_json_bytes(&value).unwrap()).unwrap();
        assert_eq!(text, "{\n  \"rows\": [\n    [],\n    []\n  ],\n  \"empty\": {},\n  \"none\": []\n}\n");
    }
}
