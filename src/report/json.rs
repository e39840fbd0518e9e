//! `report.json` (`lcgate-report/1`): the [`RunReport`] through serde, indented like
//! serde_json's pretty printer except that arrays of plain values (the plot curves) stay
//! on one line. A 2,000-part library carries about a million plot numbers; one per line
//! would triple the file for no reader's benefit. Field order is the struct order, maps
//! are BTreeMaps, and numbers print in serde_json's shortest round-trip form, so the
//! output is byte-stable.

use std::io;

use serde::Serialize;
use serde_json::ser::{CompactFormatter, Formatter};

use super::Counted;
use crate::verdict::{PartReport, RunReport};

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
    document(&super::head_of(r), w, |w| {
        let mut buf = Vec::new();
        for (i, p) in r.parts.iter().enumerate() {
            buf.clear();
            part_fragment(p, i == 0, &mut buf)?;
            w.write_all(&buf)?;
        }
        Ok(())
    })
}

/// The document around its parts: `head` is the report with no parts (its summary
/// already counted), and `parts` writes the parts' fragments ([`part_fragment`]), in
/// path order. This is how `report.json` streams: the parts are written as they are
/// judged, and the head, which needs every count, last.
pub(crate) fn document(
    head: &RunReport,
    w: &mut dyn io::Write,
    parts: impl FnOnce(&mut dyn io::Write) -> io::Result<()>,
) -> io::Result<()> {
    let frame = Frame::of(head)?;
    w.write_all(&frame.prefix)?;
    let mut counted = Counted { w: &mut *w, n: 0 };
    parts(&mut counted)?;
    let any = counted.n > 0;
    w.write_all(&frame.suffix(any))
}

/// The document without its parts, split where they go: `prefix` ends just after the
/// `[` of `parts`, padded with spaces to a whole number of blocks (see
/// [`super::BLOCK`]), and the suffix closes the array and the document.
pub(crate) struct Frame {
    pub prefix: Vec<u8>,
    after: Vec<u8>,
}

impl Frame {
    pub(crate) fn of(head: &RunReport) -> io::Result<Frame> {
        let mut text = Vec::with_capacity(4096);
        let mut ser = serde_json::Serializer::with_formatter(&mut text, ReportFormatter::default());
        head.serialize(&mut ser).map_err(io::Error::other)?;
        // the field with its indentation and line breaks: no string value holds a raw
        // line break, so this occurs once, where the struct puts `parts`
        const EMPTY: &[u8] = b"\n  \"parts\": [],\n";
        let at = text
            .windows(EMPTY.len())
            .position(|x| x == EMPTY)
            .ok_or_else(|| io::Error::other("report head without a parts field"))?;
        let open = at + EMPTY.len() - 3; // just after `[`
        let after = text.split_off(open);
        let pad = super::block_pad(text.len() as u64);
        super::write_spaces(&mut text, pad)?;
        Ok(Frame {
            prefix: text,
            after,
        })
    }

    /// What follows the parts (`any`: at least one was written).
    pub(crate) fn suffix(&self, any: bool) -> Vec<u8> {
        let mut out = Vec::with_capacity(self.after.len() + 4);
        if any {
            // the fragments wrote their own leading line breaks; close like the printer
            out.extend_from_slice(b"\n  ");
        }
        out.extend_from_slice(&self.after);
        out.push(b'\n');
        out
    }
}

/// One part as an element of the document's `parts` array, with the separator and
/// indentation the whole-document printer would give it (`first`: no comma).
pub(crate) fn part_fragment(p: &PartReport, first: bool, out: &mut Vec<u8>) -> io::Result<()> {
    // a part with plots takes about 7 KiB: grown from empty, the buffer would be
    // copied a dozen times on the way
    out.reserve(8 * 1024);
    // the printer's state inside `{ "parts": [` of the top-level object
    let state = ReportFormatter {
        indent: 2,
        arrays: vec![ArrayMode::Block, ArrayMode::Block],
        pending: Some(first),
        has_value: vec![true, true],
    };
    let mut ser = serde_json::Serializer::with_formatter(&mut *out, state);
    p.serialize(&mut ser).map_err(io::Error::other)
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

    /// The streamed document (head, then part fragments) is the whole report through
    /// the printer in one go, byte for byte but for the block padding after `[`, which
    /// takes the head to a multiple of 4 KiB.
    #[test]
    fn streamed_document_equals_the_whole_printed_at_once() {
        use crate::verdict::{PartStatus, RunInfo, Summary};
        let part = |path: &str| PartReport {
            path: path.into(),
            status: PartStatus::Pass,
            kind: None,
            view: None,
            figures: [("srf".to_string(), Some(1.5e10)), ("q".to_string(), None)]
                .into_iter()
                .collect(),
            q_drop_cause: None,
            checks: Vec::new(),
            drift: Vec::new(),
            new: false,
            error: None,
            plot: None,
        };
        for n in [0, 1, 3] {
            let r = RunReport {
                format: "lcgate-report/1".into(),
                tool_version: "0".into(),
                library: "lib \"parts\": [],".into(),
                rules: Vec::new(),
                baseline: None,
                rules_changed: Vec::new(),
                shard: None,
                strict: false,
                summary: Summary::default(),
                passed: true,
                parts: (0..n).map(|i| part(&format!("p{i}.s2p"))).collect(),
                run: RunInfo::default(),
            };
            let mut streamed = Vec::new();
            json_to(&r, &mut streamed).unwrap();
            let streamed = String::from_utf8(streamed).unwrap();
            const OPEN: &str = "\n  \"parts\": [";
            let open = streamed.find(OPEN).expect("parts") + OPEN.len();
            let pad = streamed[open..].len() - streamed[open..].trim_start_matches(' ').len();
            assert_eq!(
                (open + pad) % 4096,
                0,
                "{n} parts: the head is not whole blocks"
            );
            let unpadded = format!("{}{}", &streamed[..open], &streamed[open + pad..]);
            assert_eq!(unpadded, fmt(&r) + "\n", "{n} parts");
        }
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
