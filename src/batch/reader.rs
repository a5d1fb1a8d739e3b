//! A bounded CSV record reader for batch inputs.
//!
//! RFC 4180 CSV (`,` between fields, `"` quoting with `""` for a quote,
//! `\n`, `\r\n` or `\r` ending a record, blank lines skipped), read one
//! record at a time into a reusable [`RawRecord`], with hard bounds so that
//! no input can make one record big:
//!
//! - a record (as read: quotes and quoted line breaks included) longer than
//!   [`MAX_RECORD_BYTES`] is read to its end but not kept: it comes back
//!   marked [`RawRecord::is_oversized`], holding no cells, so the caller
//!   can answer it with an `invalid` row and go on;
//! - at most `max_fields` field boundaries are kept per record (the count
//!   of fields is still exact), so a row of a million commas costs nothing;
//! - a quoted field still open at the end of the input (a stray `"`) is
//!   [`ReadError::Unterminated`], naming the line where it opened: the
//!   rows it swallowed are not silently lost.
//!
//! Cells are bytes as read: invalid UTF-8 is kept, not replaced.

use std::io::BufRead;

/// Longest record accepted, bytes as read (1 MiB).
pub const MAX_RECORD_BYTES: usize = 1 << 20;

/// One record as read.
#[derive(Debug, Default, Clone)]
pub struct RawRecord {
    bytes: Vec<u8>,
    ends: Vec<u32>,
    fields: usize,
    raw_len: usize,
    first_line: u64,
    last_line: u64,
    oversized: bool,
}

impl RawRecord {
    /// An empty record.
    pub fn new() -> RawRecord {
        RawRecord::default()
    }

    fn clear(&mut self) {
        self.bytes.clear();
        self.ends.clear();
        self.fields = 0;
        self.raw_len = 0;
        self.oversized = false;
    }

    /// Number of fields in the record (all of them, kept or not).
    pub fn len(&self) -> usize {
        self.fields
    }

    /// Whether the record has no fields.
    pub fn is_empty(&self) -> bool {
        self.fields == 0
    }

    /// Field `i`, if kept.
    pub fn get(&self, i: usize) -> Option<&[u8]> {
        let end = *self.ends.get(i)? as usize;
        let start = if i == 0 { 0 } else { self.ends[i - 1] as usize };
        Some(&self.bytes[start..end])
    }

    /// Whether the record was longer than [`MAX_RECORD_BYTES`] (then no
    /// field is kept).
    pub fn is_oversized(&self) -> bool {
        self.oversized
    }

    /// Input line (1-based) where the record starts.
    pub fn first_line(&self) -> u64 {
        self.first_line
    }

    /// Input line where the record ends (later than the first line when a
    /// quoted field holds line breaks).
    pub fn last_line(&self) -> u64 {
        self.last_line
    }

    /// Bytes of memory the record's cells hold now.
    pub fn held_bytes(&self) -> usize {
        self.bytes.len() + 4 * self.ends.len()
    }

    /// Frees buffers grown past `keep` bytes by an unusually large record,
    /// so that a reused pool does not keep every slot at its largest.
    pub fn shrink(&mut self, keep: usize) {
        if self.bytes.capacity() > keep {
            self.bytes = Vec::new();
        }
        if self.ends.capacity() * 4 > keep {
            self.ends = Vec::new();
        }
    }

    fn push(&mut self, b: u8) {
        if !self.oversized {
            self.bytes.push(b);
        }
    }

    fn end_field(&mut self, max_fields: usize) {
        self.fields += 1;
        if !self.oversized && self.ends.len() < max_fields {
            self.ends.push(self.bytes.len() as u32);
        }
    }
}

/// Why reading stopped.
#[derive(Debug)]
pub enum ReadError {
    /// The input could not be read.
    Io(std::io::Error),
    /// A quoted field opened on `line` is still open at the end of the input.
    Unterminated {
        /// Line where the quote opened.
        line: u64,
    },
}

impl std::fmt::Display for ReadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ReadError::Io(e) => write!(f, "could not be read: {e}"),
            ReadError::Unterminated { line } => write!(
                f,
                "line {line}: a quoted field opened here is never closed (a stray '\"'?): \
                 every later line would be inside it"
            ),
        }
    }
}

impl std::error::Error for ReadError {}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum State {
    StartRecord,
    StartField,
    Unquoted,
    Quoted,
    QuoteInQuoted,
}

/// Reads [`RawRecord`]s from a buffered input.
#[derive(Debug)]
pub struct RecordReader<R> {
    inner: R,
    line: u64,
    bytes_read: u64,
    skip_lf: bool,
    max_fields: usize,
}

impl<R: BufRead> RecordReader<R> {
    /// A reader keeping at most `max_fields` fields of each record.
    pub fn new(inner: R, max_fields: usize) -> RecordReader<R> {
        RecordReader {
            inner,
            line: 1,
            bytes_read: 0,
            skip_lf: false,
            max_fields,
        }
    }

    /// Sets how many fields of each record are kept.
    pub fn set_max_fields(&mut self, n: usize) {
        self.max_fields = n;
    }

    /// Bytes consumed so far.
    pub fn bytes_read(&self) -> u64 {
        self.bytes_read
    }

    /// Reads the next record into `rec`; `false` at the end of the input.
    ///
    /// # Errors
    /// [`ReadError::Io`] when the input fails, [`ReadError::Unterminated`]
    /// when the input ends inside a quoted field.
    pub fn read(&mut self, rec: &mut RawRecord) -> Result<bool, ReadError> {
        rec.clear();
        let mut state = State::StartRecord;
        let mut quote_line = 0;
        let max = self.max_fields;
        loop {
            let buf = match self.inner.fill_buf() {
                Ok(b) => b,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => continue,
                Err(e) => return Err(ReadError::Io(e)),
            };
            if buf.is_empty() {
                return match state {
                    State::StartRecord => Ok(false),
                    State::Quoted => Err(ReadError::Unterminated { line: quote_line }),
                    _ => {
                        rec.end_field(max);
                        rec.last_line = self.line;
                        Ok(true)
                    }
                };
            }
            let mut i = 0;
            let mut done = false;
            while i < buf.len() {
                let b = buf[i];
                i += 1;
                if self.skip_lf {
                    self.skip_lf = false;
                    if b == b'\n' {
                        self.line += 1;
                        continue;
                    }
                }
                if state == State::StartRecord {
                    match b {
                        b'\n' => {
                            self.line += 1;
                            continue;
                        }
                        b'\r' => {
                            self.skip_lf = true;
                            continue;
                        }
                        _ => {
                            rec.first_line = self.line;
                            state = State::StartField;
                        }
                    }
                }
                rec.raw_len += 1;
                if rec.raw_len > MAX_RECORD_BYTES && !rec.oversized {
                    rec.oversized = true;
                    rec.bytes = Vec::new();
                    rec.ends = Vec::new();
                }
                let ends_record = match state {
                    State::StartRecord => unreachable!("handled above"),
                    State::StartField | State::Unquoted | State::QuoteInQuoted => match b {
                        b'"' if state == State::StartField => {
                            quote_line = self.line;
                            state = State::Quoted;
                            false
                        }
                        b'"' if state == State::QuoteInQuoted => {
                            rec.push(b'"');
                            state = State::Quoted;
                            false
                        }
                        b',' => {
                            rec.end_field(max);
                            state = State::StartField;
                            false
                        }
                        b'\n' | b'\r' => true,
                        _ => {
                            rec.push(b);
                            state = State::Unquoted;
                            false
                        }
                    },
                    State::Quoted => {
                        match b {
                            b'"' => state = State::QuoteInQuoted,
                            b'\n' => {
                                self.line += 1;
                                rec.push(b);
                            }
                            _ => rec.push(b),
                        }
                        false
                    }
                };
                if ends_record {
                    rec.end_field(max);
                    rec.last_line = self.line;
                    if b == b'\n' {
                        self.line += 1;
                    } else {
                        self.skip_lf = true;
                    }
                    done = true;
                    break;
                }
            }
            self.inner.consume(i);
            self.bytes_read += i as u64;
            if done {
                return Ok(true);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn all(input: &[u8]) -> Result<Vec<Vec<Vec<u8>>>, String> {
        let mut r = RecordReader::new(input, usize::MAX);
        let mut rec = RawRecord::new();
        let mut out = Vec::new();
        while r.read(&mut rec).map_err(|e| e.to_string())? {
            out.push(
                (0..rec.len())
                    .map(|i| rec.get(i).unwrap().to_vec())
                    .collect(),
            );
        }
        Ok(out)
    }

    fn text(rows: &[&[&str]]) -> Vec<Vec<Vec<u8>>> {
        rows.iter()
            .map(|r| r.iter().map(|c| c.as_bytes().to_vec()).collect())
            .collect()
    }

    #[test]
    fn reads_quoted_fields_line_ends_and_skips_blank_lines() {
        let got = all(b"a,\"b, \"\"c\"\"\",\r\n\r\n\nx,\"two\nlines\"\ry\n").unwrap();
        assert_eq!(
            got,
            text(&[&["a", "b, \"c\"", ""], &["x", "two\nlines"], &["y"]])
        );
    }

    #[test]
    fn agrees_with_the_csv_crate_on_ordinary_input() {
        let input = b"id,burnout-alt,notes\nr1,200 km,\"a, b\"\nr2,,\"q \"\"x\"\"\"\n";
        let theirs: Vec<Vec<Vec<u8>>> = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(&input[..])
            .byte_records()
            .map(|r| r.unwrap().iter().map(|f| f.to_vec()).collect())
            .collect();
        assert_eq!(all(input).unwrap(), theirs);
    }

    #[test]
    fn stray_quote_is_an_error_naming_its_line() {
        let e = all(b"h\nr1\n\"r2\nr3\nr4\n").unwrap_err();
        assert!(e.starts_with("line 3: a quoted field"), "{e}");
    }

    #[test]
    fn oversized_record_is_marked_and_reading_goes_on() {
        let mut input = b"a\n\"".to_vec();
        input.extend(std::iter::repeat_n(b'x', MAX_RECORD_BYTES));
        input.extend_from_slice(b"\nmore\"\nb\n");
        let mut r = RecordReader::new(&input[..], 4);
        let mut rec = RawRecord::new();
        assert!(r.read(&mut rec).unwrap());
        assert!(!rec.is_oversized());
        assert!(r.read(&mut rec).unwrap());
        assert!(rec.is_oversized());
        assert_eq!((rec.first_line(), rec.last_line()), (2, 3));
        assert!(rec.get(0).is_none());
        assert!(r.read(&mut rec).unwrap());
        assert_eq!(rec.get(0), Some(&b"b"[..]));
        assert_eq!(rec.first_line(), 4);
        assert!(!r.read(&mut rec).unwrap());
    }

    #[test]
    fn only_max_fields_are_kept_but_all_are_counted() {
        let mut r = RecordReader::new(&b"a,b,c,d,e\n"[..], 2);
        let mut rec = RawRecord::new();
        assert!(r.read(&mut rec).unwrap());
        assert_eq!(rec.len(), 5);
        assert_eq!(rec.get(1), Some(&b"b"[..]));
        assert_eq!(rec.get(2), None);
    }

    #[test]
    fn invalid_utf8_is_kept_as_read() {
        assert_eq!(
            all(b"\xff\xfe,ok\n").unwrap(),
            vec![vec![b"\xff\xfe".to_vec(), b"ok".to_vec()]]
        );
    }
}
