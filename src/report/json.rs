//! `report.json` (`lcgate-report/1`): the [`RunReport`] through serde, indented like
//! serde_json's pretty printer except that arrays of plain values (the plot curves) stay
//! on one line. A 2,000-part library carries about a million plot numbers; one per line
//! would triple the file for no reader's benefit. Field order is the struct order, maps
//! are BTreeMaps, and numbers print in serde_json's shortest round-trip form, so the
//! output is byte-stable.

use std::io;

use serde::Serialize;
use serde_json::ser::{CompactFormatter, Formatter};

use crate::verdict::RunReport;

/// The `lcgate-report/1` document, ending in a newline.
pub fn json(r: &RunReport) -> String {
    let mut out = Vec::with_capacity(64 * 1024);
    // writing into a Vec has no I/O to fail, and plain data always serializes (no maps
    // with non-string keys); fall back to the compact form rather than panic if it did
    if json_to(r, &mut out).is_err() {
        return serde_json::to_string(r).unwrap_or_default() + "\n";
    }
    String::from_utf8(out).unwrap_or_default()
}

/// Write the `lcgate-report/1` document, ending in a newline, to `w`.
pub fn json_to(r: &RunReport, w: &mut dyn io::Write) -> io::Result<()> {
    let mut ser = serde_json::Serializer::with_formatter(&mut *w, ReportFormatter::default());
    r.serialize(&mut ser).map_err(io::Error::other)?;
    w.write_all(b"\n")
}

/// How the current array prints: undecided until its first element is seen.
#[derive(Clone, Copy, PartialEq)]
enum ArrayMode {
    Undecided,
    Inline,
    Block,
}

#[derive(Default)]
struct ReportFormatter {
    indent: usize,
    /// one entry per open array
    arrays: Vec<ArrayMode>,
    /// an array element is about to start; `Some(first)` until we know its kind
    pending: Option<bool>,
    /// whether each open container (array or object) had any element
    has_value: Vec<bool>,
}

impl ReportFormatter {
    fn newline<W: ?Sized + io::Write>(&self, w: &mut W) -> io::Result<()> {
        w.write_all(b"\n")?;
        for _ in 0..self.indent {
            w.write_all(b"  ")?;
        }
        Ok(())
    }

    /// Called when a value starts; writes the separator an array element needs.
    fn value_start<W: ?Sized + io::Write>(&mut self, w: &mut W, scalar: bool) -> io::Result<()> {
        let Some(first) = self.pending.take() else {
            return Ok(());
        };
        let mode = self.arrays.last_mut();
        let Some(mode) = mode else { return Ok(()) };
        if *mode == ArrayMode::Undecided {
            *mode = if scalar {
                ArrayMode::Inline
            } else {
                ArrayMode::Block
            };
        }
        match *mode {
            ArrayMode::Inline => {
                if !first {
                    w.write_all(b", ")?;
                }
            }
            _ => {
                if !first {
                    w.write_all(b",")?;
                }
                self.newline(w)?;
            }
        }
        Ok(())
    }
}

macro_rules! scalar {
    ($name:ident, $t:ty) => {
        fn $name<W: ?Sized + io::Write>(&mut self, w: &mut W, v: $t) -> io::Result<()> {
            self.value_start(w, true)?;
            CompactFormatter.$name(w, v)
        }
    };
}

impl Formatter for ReportFormatter {
    fn write_null<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.value_start(w, true)?;
        w.write_all(b"null")
    }
    scalar!(write_bool, bool);
    scalar!(write_i8, i8);
    scalar!(write_i16, i16);
    scalar!(write_i32, i32);
    scalar!(write_i64, i64);
    scalar!(write_i128, i128);
    scalar!(write_u8, u8);
    scalar!(write_u16, u16);
    scalar!(write_u32, u32);
    scalar!(write_u64, u64);
    scalar!(write_u128, u128);
    scalar!(write_f32, f32);
    scalar!(write_f64, f64);
    scalar!(write_number_str, &str);

    fn begin_string<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.value_start(w, true)?;
        w.write_all(b"\"")
    }

    fn begin_array<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.value_start(w, false)?;
        self.arrays.push(ArrayMode::Undecided);
        self.has_value.push(false);
        self.indent += 1;
        w.write_all(b"[")
    }

    fn end_array<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.indent -= 1;
        let mode = self.arrays.pop().unwrap_or(ArrayMode::Inline);
        let had = self.has_value.pop().unwrap_or(false);
        if had && mode == ArrayMode::Block {
            self.newline(w)?;
        }
        w.write_all(b"]")
    }

    fn begin_array_value<W: ?Sized + io::Write>(
        &mut self,
        _w: &mut W,
        first: bool,
    ) -> io::Result<()> {
        if let Some(h) = self.has_value.last_mut() {
            *h = true;
        }
        self.pending = Some(first);
        Ok(())
    }

    fn end_array_value<W: ?Sized + io::Write>(&mut self, _w: &mut W) -> io::Result<()> {
        Ok(())
    }

    fn begin_object<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.value_start(w, false)?;
        // Objects are not arrays: a nested array inside must not see this array's mode.
        self.arrays.push(ArrayMode::Block);
        self.has_value.push(false);
        self.indent += 1;
        w.write_all(b"{")
    }

    fn end_object<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        self.indent -= 1;
        self.arrays.pop();
        let had = self.has_value.pop().unwrap_or(false);
        if had {
            self.newline(w)?;
        }
        w.write_all(b"}")
    }

    fn begin_object_key<W: ?Sized + io::Write>(
        &mut self,
        w: &mut W,
        first: bool,
    ) -> io::Result<()> {
        if let Some(h) = self.has_value.last_mut() {
            *h = true;
        }
        if !first {
            w.write_all(b",")?;
        }
        self.newline(w)
    }

    fn end_object_key<W: ?Sized + io::Write>(&mut self, _w: &mut W) -> io::Result<()> {
        Ok(())
    }

    fn begin_object_value<W: ?Sized + io::Write>(&mut self, w: &mut W) -> io::Result<()> {
        w.write_all(b": ")
    }

    fn end_object_value<W: ?Sized + io::Write>(&mut self, _w: &mut W) -> io::Result<()> {
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fmt<T: Serialize>(v: &T) -> String {
        let mut out = Vec::new();
        let mut ser = serde_json::Serializer::with_formatter(&mut out, ReportFormatter::default());
        v.serialize(&mut ser).expect("serialize");
        String::from_utf8(out).expect("utf8")
    }

    #[test]
    fn scalar_arrays_inline_objects_indented() {
        let v = serde_json::json!({
            "a": [1.5, null, 3],
            "b": [{"x": 1}, {"y": [true]}],
            "c": [],
            "d": {},
            "e": [[1, 2], [3]]
        });
        let s = fmt(&v);
        let expected = "{\n  \"a\": [1.5, null, 3],\n  \"b\": [\n    {\n      \"x\": 1\n    },\n    {\n      \"y\": [true]\n    }\n  ],\n  \"c\": [],\n  \"d\": {},\n  \"e\": [\n    [1, 2],\n    [3]\n  ]\n}";
        assert_eq!(s, expected);
        // and it is still JSON that reads back to the same value
        let back: serde_json::Value = serde_json::from_str(&s).expect("parse");
        assert_eq!(back, v);
    }
}
