//! XES writer: an [`EventLog`] as an IEEE 1849-2016 document.
//!
//! The output has the shape the standard defines (IEEE 1849-2016, section 5):
//!
//! ```text
//! <?xml version="1.0" encoding="UTF-8"?>
//! <log xes.version="1849-2016" xes.features="nested-attributes" xmlns="http://www.xes-standard.org/">
//!   <extension name="Concept" prefix="concept" uri="http://www.xes-standard.org/concept.xesext"/>
//!   ... time, lifecycle, org ...
//!   <global scope="trace"> concept:name </global>
//!   <global scope="event"> concept:name, time:timestamp </global>
//!   <classifier name="activity" keys="concept:name"/>
//!   <trace>
//!     <string key="concept:name" value="case label"/>   then the case attributes
//!     <event>
//!       concept:name, time:timestamp, org:resource, lifecycle:transition, event attributes
//!     </event>
//!   </trace>
//! </log>
//! ```
//!
//! Column types map to XES types as text → `string`, `i64` → `int`, `f64` → `float`,
//! bool → `boolean`, time → `date`; a null is written as an absent attribute. Floats use the
//! shortest decimal that parses back to the same `f64` (and `NaN`, `INF`, `-INF` as
//! `xs:double` spells them), dates keep all nanoseconds, so [`super::read_xes`] gives back the
//! same log. Dotted keys (flattened nested attributes) are written as they are.
//!
//! Text is escaped for XML (`&`, `<`, `>`, `"`, `'`; tab, CR and LF as character references so
//! that attribute-value normalisation does not turn them into spaces). Characters XML 1.0 cannot
//! carry at all (other C0 controls, U+FFFE, U+FFFF) make the writer fail with an error naming
//! the case and the attribute, rather than write a file no parser would accept.
//!
//! An all-null attribute column leaves no trace in the file (XES has no way to declare an
//! attribute without a value), and `id` or `container` types are never written.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use flate2::write::GzEncoder;
use flate2::Compression;

use super::columns::push_f64;
use super::input::xml_char_ok;
use super::read::{XesValue, KEY_LIFECYCLE, KEY_NAME, KEY_RESOURCE, KEY_TIME};
use super::time::format_ns_into;
use crate::error::{TmError, TmResult};
use crate::log::{Column, EventLog, Values};

/// Options of [`write_xes`].
#[derive(Debug, Clone)]
pub struct XesWriteOptions {
    /// A log-level `concept:name`; default `None` (not written).
    pub log_name: Option<String>,
    /// Further log-level attributes, written in order after the name; default empty.
    pub log_attributes: Vec<(String, XesValue)>,
    /// Declare `concept:name` (traces and events) and `time:timestamp` (events) as globals;
    /// default `true`. Every trace and event written carries them.
    pub write_globals: bool,
    /// gzip level 0–9 used by [`write_xes_path`] for `.gz` paths; default 6.
    pub gzip_level: u32,
}

impl Default for XesWriteOptions {
    fn default() -> Self {
        XesWriteOptions {
            log_name: None,
            log_attributes: Vec::new(),
            write_globals: true,
            gzip_level: 6,
        }
    }
}

/// Bytes buffered before they are handed to the underlying writer.
const FLUSH_AT: usize = 1 << 16;

/// The standard extensions used by the writer: name, prefix, definition URI.
const EXTENSIONS: [(&str, &str, &str); 4] = [
    (
        "Concept",
        "concept",
        "http://www.xes-standard.org/concept.xesext",
    ),
    ("Time", "time", "http://www.xes-standard.org/time.xesext"),
    (
        "Lifecycle",
        "lifecycle",
        "http://www.xes-standard.org/lifecycle.xesext",
    ),
    (
        "Organizational",
        "org",
        "http://www.xes-standard.org/org.xesext",
    ),
];

/// Append `s` escaped for an XML attribute value; `Err(c)` for a character XML cannot carry.
fn escape_into(out: &mut Vec<u8>, s: &str) -> Result<(), char> {
    let clean = s
        .bytes()
        .all(|b| b >= 0x20 && !matches!(b, b'&' | b'<' | b'>' | b'"' | b'\'' | 0xEF));
    if clean {
        out.extend_from_slice(s.as_bytes());
        return Ok(());
    }
    for c in s.chars() {
        match c {
            '&' => out.extend_from_slice(b"&amp;"),
            '<' => out.extend_from_slice(b"&lt;"),
            '>' => out.extend_from_slice(b"&gt;"),
            '"' => out.extend_from_slice(b"&quot;"),
            '\'' => out.extend_from_slice(b"&apos;"),
            '\t' => out.extend_from_slice(b"&#9;"),
            '\n' => out.extend_from_slice(b"&#10;"),
            '\r' => out.extend_from_slice(b"&#13;"),
            c if xml_char_ok(c) => {
                let mut tmp = [0u8; 4];
                out.extend_from_slice(c.encode_utf8(&mut tmp).as_bytes());
            }
            c => return Err(c),
        }
    }
    Ok(())
}

/// A dictionary escaped once, so that each event only copies bytes.
fn escape_dict(dict: &[String]) -> Vec<Result<Vec<u8>, char>> {
    dict.iter()
        .map(|s| {
            let mut v = Vec::with_capacity(s.len());
            escape_into(&mut v, s).map(|()| v)
        })
        .collect()
}

fn bad_char(c: char, what: &str, case: &str) -> TmError {
    TmError::data(format!(
        "cannot write XES: {what} of case '{}' contains the character U+{:04X}, which XML 1.0 \
         cannot represent; remove or replace it first",
        case.escape_debug(),
        u32::from(c)
    ))
}

/// A column prepared for writing: its key escaped, its dictionary escaped.
struct Prepared<'a> {
    col: &'a Column,
    key: Vec<u8>,
    dict: Vec<Result<Vec<u8>, char>>,
}

fn prepare<'a>(cols: &'a [Column], reserved: &[&str], scope: &str) -> TmResult<Vec<Prepared<'a>>> {
    cols.iter()
        .map(|col| {
            if reserved.contains(&col.name.as_str()) {
                return Err(TmError::schema(
                    col.name.clone(),
                    None,
                    format!(
                        "cannot write XES: the {scope} attribute '{}' has the name of a key the \
                         writer fills itself; rename the column",
                        col.name
                    ),
                ));
            }
            let mut key = Vec::new();
            escape_into(&mut key, &col.name).map_err(|c| {
                TmError::schema(
                    col.name.clone(),
                    None,
                    format!(
                        "cannot write XES: the {scope} attribute name '{}' contains U+{:04X}, \
                         which XML 1.0 cannot represent",
                        col.name.escape_debug(),
                        u32::from(c)
                    ),
                )
            })?;
            // Columns are public, so check what indexing below relies on rather than panic.
            if col.valid.as_ref().is_some_and(|m| m.len() != col.len()) {
                return Err(TmError::schema(
                    col.name.clone(),
                    None,
                    format!(
                        "cannot write XES: the {scope} attribute '{}' has a validity mask of a \
                         different length than its values",
                        col.name
                    ),
                ));
            }
            let dict = match &col.values {
                Values::Cat { dict, codes } => {
                    // Codes under nulls are unspecified (e.g. `u32::MAX`) and never read.
                    let bad = |(i, &c): (usize, &u32)| c as usize >= dict.len() && col.is_valid(i);
                    if let Some(row) = codes.iter().enumerate().position(bad) {
                        return Err(TmError::schema(
                            col.name.clone(),
                            Some(row as u64),
                            format!(
                                "cannot write XES: the {scope} attribute '{}' has code {} at row \
                                 {row}, outside its dictionary of {} values",
                                col.name,
                                codes[row],
                                dict.len()
                            ),
                        ));
                    }
                    escape_dict(dict)
                }
                _ => Vec::new(),
            };
            Ok(Prepared { col, key, dict })
        })
        .collect()
}

struct Out<W: Write> {
    w: W,
    buf: Vec<u8>,
}

impl<W: Write> Out<W> {
    fn raw(&mut self, b: &[u8]) {
        self.buf.extend_from_slice(b);
    }
    fn maybe_flush(&mut self) -> TmResult<()> {
        if self.buf.len() >= FLUSH_AT {
            self.flush_buf()?;
        }
        Ok(())
    }
    fn flush_buf(&mut self) -> TmResult<()> {
        self.w.write_all(&self.buf).map_err(|e| TmError::Io {
            message: format!("writing XES: {e}"),
        })?;
        self.buf.clear();
        Ok(())
    }
    /// `<tag key="key" value="` ... the caller writes the value and calls `close_attr`.
    fn open_attr(&mut self, indent: &[u8], tag: &[u8], key: &[u8]) {
        self.buf.extend_from_slice(indent);
        self.buf.push(b'<');
        self.buf.extend_from_slice(tag);
        self.buf.extend_from_slice(b" key=\"");
        self.buf.extend_from_slice(key);
        self.buf.extend_from_slice(b"\" value=\"");
    }
    fn close_attr(&mut self) {
        self.buf.extend_from_slice(b"\"/>\n");
    }
    fn int(&mut self, i: i64) {
        // Writing to a Vec cannot fail.
        let _ = write!(self.buf, "{i}");
    }
    fn text_attr(&mut self, indent: &[u8], key: &[u8], value: &str) -> Result<(), char> {
        self.open_attr(indent, b"string", key);
        escape_into(&mut self.buf, value)?;
        self.close_attr();
        Ok(())
    }
    /// Write row `i` of a prepared column, if not null.
    fn cell(&mut self, indent: &[u8], p: &Prepared<'_>, i: usize) -> Result<(), char> {
        if !p.col.is_valid(i) {
            return Ok(());
        }
        match &p.col.values {
            Values::Cat { codes, .. } => {
                let v = p.dict[codes[i] as usize].as_ref().map_err(|&c| c)?;
                self.open_attr(indent, b"string", &p.key);
                self.buf.extend_from_slice(v);
            }
            Values::I64(v) => {
                self.open_attr(indent, b"int", &p.key);
                self.int(v[i]);
            }
            Values::F64(v) => {
                self.open_attr(indent, b"float", &p.key);
                push_f64(&mut self.buf, v[i]);
            }
            Values::Bool(v) => {
                self.open_attr(indent, b"boolean", &p.key);
                self.buf
                    .extend_from_slice(if v[i] { b"true" } else { b"false" });
            }
            Values::Time(v) => {
                self.open_attr(indent, b"date", &p.key);
                format_ns_into(&mut self.buf, v[i]);
            }
        }
        self.close_attr();
        Ok(())
    }
    fn value(&mut self, indent: &[u8], key: &str, v: &XesValue) -> Result<(), char> {
        let mut k = Vec::new();
        escape_into(&mut k, key)?;
        let tag: &[u8] = match v {
            XesValue::String(_) => b"string",
            XesValue::Id(_) => b"id",
            XesValue::Date(_) => b"date",
            XesValue::Int(_) => b"int",
            XesValue::Float(_) => b"float",
            XesValue::Boolean(_) => b"boolean",
        };
        self.open_attr(indent, tag, &k);
        match v {
            XesValue::String(s) | XesValue::Id(s) => escape_into(&mut self.buf, s)?,
            XesValue::Date(t) => format_ns_into(&mut self.buf, *t),
            XesValue::Int(i) => self.int(*i),
            XesValue::Float(x) => push_f64(&mut self.buf, *x),
            XesValue::Boolean(b) => self.raw(if *b { b"true" } else { b"false" }),
        }
        self.close_attr();
        Ok(())
    }
}

/// Write `log` as an XES 2016 document to `w` (uncompressed).
///
/// Cases come in log order, events in their (time-sorted) case order.
///
/// # Errors
/// [`TmError::Data`] naming the case when a text holds a character XML 1.0 cannot represent;
/// [`TmError::Schema`] when an attribute column is named like a key the writer fills itself
/// (`concept:name`, `time:timestamp`, `org:resource`, `lifecycle:transition`);
/// [`TmError::Io`] when writing fails.
pub fn write_xes<W: Write>(log: &EventLog, w: W, opts: &XesWriteOptions) -> TmResult<()> {
    let mut out = Out {
        w,
        buf: Vec::with_capacity(FLUSH_AT + 4096),
    };
    let case_cols = prepare(log.case_attrs(), &[KEY_NAME], "case")?;
    let event_cols = prepare(
        log.event_attrs(),
        &[KEY_NAME, KEY_TIME, KEY_RESOURCE, KEY_LIFECYCLE],
        "event",
    )?;
    let activities = escape_dict(log.activity_names());
    let cat_dict = |c: Option<&Column>| match c.map(|c| &c.values) {
        Some(Values::Cat { dict, .. }) => escape_dict(dict),
        _ => Vec::new(),
    };
    let resource = log.resource();
    let lifecycle = log.lifecycle();
    let resource_dict = cat_dict(resource);
    let lifecycle_dict = cat_dict(lifecycle);

    out.raw(b"<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    out.raw(
        b"<log xes.version=\"1849-2016\" xes.features=\"nested-attributes\" \
          xmlns=\"http://www.xes-standard.org/\">\n",
    );
    for (name, prefix, uri) in EXTENSIONS {
        let _ = writeln!(
            out.buf,
            "\t<extension name=\"{name}\" prefix=\"{prefix}\" uri=\"{uri}\"/>"
        );
    }
    if opts.write_globals {
        out.raw(b"\t<global scope=\"trace\">\n");
        out.raw(b"\t\t<string key=\"concept:name\" value=\"\"/>\n");
        out.raw(b"\t</global>\n");
        out.raw(b"\t<global scope=\"event\">\n");
        out.raw(b"\t\t<string key=\"concept:name\" value=\"\"/>\n");
        out.raw(b"\t\t<date key=\"time:timestamp\" value=\"1970-01-01T00:00:00+00:00\"/>\n");
        out.raw(b"\t</global>\n");
    }
    out.raw(b"\t<classifier name=\"activity\" keys=\"concept:name\"/>\n");
    if lifecycle.is_some() {
        out.raw(
            b"\t<classifier name=\"activity and transition\" \
              keys=\"concept:name lifecycle:transition\"/>\n",
        );
    }
    let log_level = |c| {
        TmError::data(format!(
            "cannot write XES: a log-level attribute contains the character U+{:04X}, which \
             XML 1.0 cannot represent",
            u32::from(c)
        ))
    };
    if let Some(name) = &opts.log_name {
        out.text_attr(b"\t", KEY_NAME.as_bytes(), name)
            .map_err(log_level)?;
    }
    for (k, v) in &opts.log_attributes {
        out.value(b"\t", k, v).map_err(log_level)?;
    }

    let times = log.times();
    let acts = log.activities();
    for c in 0..log.n_cases() {
        let label = log.case_name(c);
        out.raw(b"\t<trace>\n");
        out.text_attr(b"\t\t", KEY_NAME.as_bytes(), label)
            .map_err(|ch| bad_char(ch, "the label", label))?;
        for p in &case_cols {
            out.cell(b"\t\t", p, c)
                .map_err(|ch| bad_char(ch, &format!("case attribute '{}'", p.col.name), label))?;
        }
        let (s, e) = (log.offsets()[c], log.offsets()[c + 1]);
        for i in s..e {
            out.raw(b"\t\t<event>\n");
            let a = activities[acts[i] as usize]
                .as_ref()
                .map_err(|&ch| bad_char(ch, "an activity name", label))?;
            out.open_attr(b"\t\t\t", b"string", KEY_NAME.as_bytes());
            out.raw(a);
            out.close_attr();
            out.open_attr(b"\t\t\t", b"date", KEY_TIME.as_bytes());
            format_ns_into(&mut out.buf, times[i]);
            out.close_attr();
            for (col, dict, key) in [
                (resource, &resource_dict, KEY_RESOURCE),
                (lifecycle, &lifecycle_dict, KEY_LIFECYCLE),
            ] {
                if let Some(Column {
                    values: Values::Cat { codes, .. },
                    ..
                }) = col
                {
                    if col.is_some_and(|c| c.is_valid(i)) {
                        let v = dict[codes[i] as usize]
                            .as_ref()
                            .map_err(|&ch| bad_char(ch, key, label))?;
                        out.open_attr(b"\t\t\t", b"string", key.as_bytes());
                        out.raw(v);
                        out.close_attr();
                    }
                }
            }
            for p in &event_cols {
                out.cell(b"\t\t\t", p, i).map_err(|ch| {
                    bad_char(ch, &format!("event attribute '{}'", p.col.name), label)
                })?;
            }
            out.raw(b"\t\t</event>\n");
            out.maybe_flush()?;
        }
        out.raw(b"\t</trace>\n");
    }
    out.raw(b"</log>\n");
    out.flush_buf()?;
    out.w.flush().map_err(|e| TmError::Io {
        message: format!("writing XES: {e}"),
    })
}

/// Write `log` to a file; gzip-compressed when the path ends in `.gz`.
///
/// # Errors
/// As [`write_xes`]; [`TmError::Io`] naming the path when it cannot be created. After an
/// error the partly written file is removed.
pub fn write_xes_path(log: &EventLog, path: impl AsRef<Path>) -> TmResult<()> {
    write_xes_path_with(log, path, &XesWriteOptions::default())
}

/// [`write_xes_path`] with options.
///
/// # Errors
/// As [`write_xes_path`].
pub fn write_xes_path_with(
    log: &EventLog,
    path: impl AsRef<Path>,
    opts: &XesWriteOptions,
) -> TmResult<()> {
    let path = path.as_ref();
    let io = |e: std::io::Error| TmError::Io {
        message: format!("writing XES file '{}': {e}", path.display()),
    };
    let f = File::create(path).map_err(io)?;
    let w = BufWriter::with_capacity(FLUSH_AT, f);
    let gz = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("gz"));
    let written = if gz {
        let mut enc = GzEncoder::new(w, Compression::new(opts.gzip_level.min(9)));
        write_xes(log, &mut enc, opts).and_then(|()| enc.finish().map_err(io)?.flush().map_err(io))
    } else {
        let mut w = w;
        write_xes(log, &mut w, opts).and_then(|()| w.flush().map_err(io))
    };
    if written.is_err() {
        // A document cut short where the error struck must not pass for the log.
        let _ = std::fs::remove_file(path);
    }
    written
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::log::{CaseAttrs, LogInput};
    use crate::xes::{read_xes_bytes, XesLog};
    use rand::{Rng, SeedableRng};
    use rand_xoshiro::Xoshiro256PlusPlus;
    use std::sync::Arc;

    fn write(log: &EventLog) -> TmResult<String> {
        let mut out = Vec::new();
        write_xes(log, &mut out, &XesWriteOptions::default())?;
        Ok(String::from_utf8(out).unwrap())
    }

    fn cat(name: &str, dict: &[&str], codes: Vec<u32>, valid: Option<Vec<bool>>) -> Column {
        Column {
            name: name.into(),
            values: Values::Cat {
                codes,
                dict: Arc::new(dict.iter().map(|s| (*s).to_string()).collect()),
            },
            valid,
        }
    }

    fn small_log(label: &str, activity: &str) -> EventLog {
        let input = LogInput::new(
            vec![0, 0],
            vec![label.into()],
            vec![0, 0],
            vec![activity.into()],
            vec![0, 1_500_000_000],
        );
        EventLog::build(input).unwrap().0
    }

    fn f64_text(x: f64) -> String {
        let mut v = Vec::new();
        push_f64(&mut v, x);
        String::from_utf8(v).unwrap()
    }

    // xs:double lexical forms (XML Schema Part 2, 3.2.5): INF, -INF, NaN, mantissa and
    // exponent. Shortest round-trip digits are Rust's `{}` / `{:e}` formatting.
    #[test]
    fn floats_use_shortest_xs_double_text() {
        for (x, s) in [
            (0.1, "0.1"),
            (-0.0, "-0"),
            (123_456.0, "123456"),
            (1e16, "1e16"),
            (1e300, "1e300"),
            (5e-324, "5e-324"),
            (2.5e-6, "2.5e-6"),
            (f64::NAN, "NaN"),
            (f64::INFINITY, "INF"),
            (f64::NEG_INFINITY, "-INF"),
        ] {
            assert_eq!(f64_text(x), s);
        }
    }

    #[test]
    fn document_shape_follows_ieee_1849_2016() {
        let doc = write(&small_log("bike & <co>", "fix \"quoted\" 'brake'\tnow")).unwrap();
        let lines: Vec<&str> = doc.lines().collect();
        assert_eq!(lines[0], "<?xml version=\"1.0\" encoding=\"UTF-8\"?>");
        assert_eq!(
            lines[1],
            "<log xes.version=\"1849-2016\" xes.features=\"nested-attributes\" \
             xmlns=\"http://www.xes-standard.org/\">"
        );
        assert!(doc.contains(
            "<extension name=\"Lifecycle\" prefix=\"lifecycle\" \
             uri=\"http://www.xes-standard.org/lifecycle.xesext\"/>"
        ));
        assert!(doc.contains("<string key=\"concept:name\" value=\"bike &amp; &lt;co&gt;\"/>"));
        assert!(doc.contains("value=\"fix &quot;quoted&quot; &apos;brake&apos;&#9;now\"/>"));
        assert!(
            doc.contains("<date key=\"time:timestamp\" value=\"1970-01-01T00:00:01.5+00:00\"/>")
        );
        assert!(doc.ends_with("</log>\n"));
        let x = read_xes_bytes(doc.as_bytes()).unwrap();
        assert_eq!(x.input.case_names, ["bike & <co>"]);
        assert_eq!(x.input.activity_names, ["fix \"quoted\" 'brake'\tnow"]);
        assert_eq!(x.meta.version.as_deref(), Some("1849-2016"));
        assert_eq!(x.meta.extensions.len(), 4);
        assert_eq!(x.meta.classifiers[0].keys, ["concept:name"]);
    }

    #[test]
    fn unrepresentable_characters_name_the_case() {
        let err = write(&small_log("bike\u{1}7", "a")).unwrap_err();
        assert!(matches!(err, TmError::Data { .. }));
        assert!(
            err.to_string().contains("bike\\u{1}7") && err.to_string().contains("U+0001"),
            "{err}"
        );
        let err = write(&small_log("bike-8", "stop\u{FFFF}")).unwrap_err();
        assert!(
            err.to_string().contains("'bike-8'") && err.to_string().contains("activity"),
            "{err}"
        );
        // A bad dictionary entry that no event uses does not matter.
        let mut input = LogInput::new(
            vec![0],
            vec!["c".into()],
            vec![0],
            vec!["a".into()],
            vec![0],
        );
        input.event_attrs = vec![cat("note", &["ok", "bad\u{0}"], vec![0], None)];
        let (log, _) = EventLog::build(input).unwrap();
        assert!(write(&log).is_ok());
    }

    #[test]
    fn malformed_columns_are_errors_not_panics() {
        let mut input = LogInput::new(
            vec![0],
            vec!["c".into()],
            vec![0],
            vec!["a".into()],
            vec![0],
        );
        let bad = cat("note", &["x"], vec![3], None);
        input.event_attrs = vec![bad.clone()];
        // `build` refuses the code; the writer checks again rather than trust its input.
        assert!(EventLog::build(input.clone()).is_err());
        input.event_attrs.clear();
        let (mut log, _) = EventLog::build(input).unwrap();
        log.event_attrs = vec![bad];
        let err = write(&log).unwrap_err();
        assert!(
            matches!(err, TmError::Schema { row: Some(0), .. }),
            "{err:?}"
        );
    }

    #[test]
    fn codes_under_nulls_are_not_read() {
        // The log leaves the code of a null text cell unspecified (frames give u32::MAX).
        let mut input = LogInput::new(
            vec![0, 0],
            vec!["c".into()],
            vec![0, 0],
            vec!["a".into()],
            vec![0, 1],
        );
        input.event_attrs = vec![cat(
            "note",
            &["x"],
            vec![0, u32::MAX],
            Some(vec![true, false]),
        )];
        let (log, _) = EventLog::build(input).unwrap();
        let doc = write(&log).unwrap();
        assert_eq!(doc.matches("key=\"note\"").count(), 1, "{doc}");
    }

    #[test]
    fn reserved_attribute_names_are_refused() {
        let mut input = LogInput::new(
            vec![0],
            vec!["c".into()],
            vec![0],
            vec!["a".into()],
            vec![0],
        );
        input.event_attrs = vec![Column::new("time:timestamp", Values::I64(vec![1]))];
        let (log, _) = EventLog::build(input).unwrap();
        let err = write(&log).unwrap_err();
        assert!(
            matches!(err, TmError::Schema { column: Some(ref c), .. } if c == "time:timestamp")
        );
    }

    #[test]
    fn log_level_options_are_written() {
        let log = small_log("c", "a");
        let opts = XesWriteOptions {
            log_name: Some("workshop".into()),
            log_attributes: vec![
                ("season".into(), XesValue::String("spring".into())),
                ("bays".into(), XesValue::Int(3)),
                ("opened".into(), XesValue::Date(0)),
                ("rate".into(), XesValue::Float(0.25)),
                ("busy".into(), XesValue::Boolean(true)),
                ("uid".into(), XesValue::Id("x-1".into())),
            ],
            write_globals: false,
            gzip_level: 6,
        };
        let mut out = Vec::new();
        write_xes(&log, &mut out, &opts).unwrap();
        let x = read_xes_bytes(&out).unwrap();
        assert!(x.meta.globals.is_empty());
        assert_eq!(
            x.meta.attributes[0],
            ("concept:name".into(), XesValue::String("workshop".into()))
        );
        assert_eq!(&x.meta.attributes[1..], &opts.log_attributes[..]);
    }

    #[test]
    fn path_writer_gzips_by_extension() {
        let dir = std::env::temp_dir().join(format!("tracemill-xes-write-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let log = small_log("c", "a");
        for name in ["l.xes", "l.xes.gz"] {
            let p = dir.join(name);
            write_xes_path(&log, &p).unwrap();
            let bytes = std::fs::read(&p).unwrap();
            assert_eq!(bytes.starts_with(&[0x1f, 0x8b]), name.ends_with(".gz"));
            let x = crate::xes::read_xes_path(&p).unwrap();
            assert_eq!(x.input.time, [0, 1_500_000_000]);
            // A failed write leaves no partial document behind.
            let err = write_xes_path(&small_log("c", "bad\u{1}"), &p).unwrap_err();
            assert!(matches!(err, TmError::Data { .. }), "{err:?}");
            assert!(!p.exists());
        }
        std::fs::remove_dir_all(&dir).unwrap();
    }

    // ---- round trip over random logs -------------------------------------------------------

    const ODD: [&str; 12] = [
        "plain",
        "a<b",
        "x & y",
        "\"double\" and 'single'",
        "]]> and -->",
        "Ünïcödé 🚲 自行车",
        " padded ",
        "",
        "tab\there",
        "line\nbreak\r\nand cr\r",
        "&amp; literally",
        "a.b:c#2",
    ];

    fn pick<'a>(rng: &mut Xoshiro256PlusPlus, pool: &[&'a str]) -> &'a str {
        pool[rng.random_range(0..pool.len())]
    }

    fn mask(rng: &mut Xoshiro256PlusPlus, n: usize) -> Option<Vec<bool>> {
        if rng.random_bool(0.5) {
            return None;
        }
        let mut m: Vec<bool> = (0..n).map(|_| rng.random_bool(0.6)).collect();
        m[rng.random_range(0..n)] = true; // an all-null column cannot be written
        Some(m)
    }

    fn random_column(rng: &mut Xoshiro256PlusPlus, name: &str, n: usize) -> Column {
        const FLOATS: [f64; 10] = [
            0.1,
            -0.0,
            1e300,
            5e-324,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
            2.5e-6,
            -17.25,
            1e16,
        ];
        const INTS: [i64; 5] = [i64::MIN, i64::MAX, 0, -1, 42];
        let values = match rng.random_range(0..5) {
            0 => Values::F64(
                (0..n)
                    .map(|_| {
                        if rng.random_bool(0.5) {
                            FLOATS[rng.random_range(0..FLOATS.len())]
                        } else {
                            f64::from_bits(rng.random::<u64>() >> 2)
                                * if rng.random_bool(0.5) { -1.0 } else { 1.0 }
                        }
                    })
                    .collect(),
            ),
            1 => Values::I64(
                (0..n)
                    .map(|_| {
                        if rng.random_bool(0.3) {
                            INTS[rng.random_range(0..5)]
                        } else {
                            rng.random()
                        }
                    })
                    .collect(),
            ),
            2 => Values::Bool((0..n).map(|_| rng.random_bool(0.5)).collect()),
            3 => Values::Time((0..n).map(|_| rng.random()).collect()),
            _ => Values::Cat {
                codes: (0..n)
                    .map(|_| rng.random_range(0..ODD.len() as u32))
                    .collect(),
                dict: Arc::new(ODD.iter().map(|s| (*s).to_string()).collect()),
            },
        };
        let valid = mask(rng, n);
        Column {
            name: name.into(),
            values,
            valid,
        }
    }

    fn random_log(rng: &mut Xoshiro256PlusPlus) -> EventLog {
        let n_cases = rng.random_range(1..6);
        let mut input = LogInput::default();
        let acts = [
            "register",
            "a<b",
            "x & y",
            "Ünïcödé 🚲",
            "\"q\"",
            " ",
            "line\nbreak",
        ];
        input.activity_names = acts.iter().map(|s| (*s).to_string()).collect();
        let base: i64 = rng.random_range(-4_000_000_000_000_000_000..4_000_000_000_000_000_000);
        for c in 0..n_cases {
            input.case_names.push(format!("{}-{c}", pick(rng, &ODD)));
            for _ in 0..rng.random_range(1..5) {
                input.case.push(c);
                input.activity.push(rng.random_range(0..acts.len() as u32));
                // Equal timestamps are common: draw from a handful of instants.
                let t = base + rng.random_range(0..4) * rng.random_range(1..1_000_000_000_000i64);
                input.time.push(t);
            }
        }
        let n = input.case.len();
        if rng.random_bool(0.7) {
            let codes = (0..n).map(|_| rng.random_range(0..3)).collect();
            input.resource = Some(cat("res", &["Ana", "Bo & Co", "Ünï"], codes, mask(rng, n)));
        }
        if rng.random_bool(0.5) {
            let codes = (0..n).map(|_| rng.random_range(0..2)).collect();
            input.lifecycle = Some(cat("lc", &["start", "complete"], codes, mask(rng, n)));
        }
        let names = ["cost", "weird <key> & \"name\"", "part.0", "ride", "when"];
        input.event_attrs = (0..rng.random_range(0..4))
            .map(|k| random_column(rng, names[k], n))
            .collect();
        let n_cases = n_cases as usize;
        let cols: Vec<Column> = (0..rng.random_range(0..4))
            .map(|k| random_column(rng, &format!("case {}", names[k]), n_cases))
            .collect();
        if !cols.is_empty() {
            input.case_attrs = CaseAttrs::PerCase(cols);
        }
        EventLog::build(input).unwrap().0
    }

    fn cells(c: &Column) -> Vec<Option<String>> {
        (0..c.len())
            .map(|i| {
                c.is_valid(i).then(|| match &c.values {
                    // Compare floats by bits (NaN is the canonical NaN on both sides).
                    Values::F64(v) => format!("{:016x}", v[i].to_bits()),
                    other => other.text(i),
                })
            })
            .collect()
    }

    fn same_columns(a: &[Column], b: &[Column], what: &str) {
        // The reader orders columns by first appearance in the file, so compare by name.
        let sorted = |c: &'_ [Column]| {
            let mut v: Vec<Column> = c.to_vec();
            v.sort_by(|x, y| x.name.cmp(&y.name));
            v
        };
        let (a, b) = (sorted(a), sorted(b));
        assert_eq!(a.len(), b.len(), "{what}: {a:?} vs {b:?}");
        for (x, y) in a.iter().zip(&b) {
            assert_eq!(x.name, y.name, "{what}");
            assert_eq!(
                crate::log::column::type_name(&x.values),
                crate::log::column::type_name(&y.values),
                "{what} {}",
                x.name
            );
            assert_eq!(cells(x), cells(y), "{what} {}", x.name);
        }
    }

    fn assert_same_log(a: &EventLog, b: &EventLog) {
        assert_eq!(a.n_cases(), b.n_cases());
        assert_eq!(a.offsets(), b.offsets());
        for c in 0..a.n_cases() {
            assert_eq!(a.case_name(c), b.case_name(c));
        }
        let acts = |l: &EventLog| -> Vec<String> {
            l.activities()
                .iter()
                .map(|&x| l.activity_names()[x as usize].clone())
                .collect()
        };
        assert_eq!(acts(a), acts(b));
        assert_eq!(a.times(), b.times());
        let opt = |c: Option<&Column>| c.map(cells);
        assert_eq!(opt(a.resource()), opt(b.resource()));
        assert_eq!(opt(a.lifecycle()), opt(b.lifecycle()));
        same_columns(a.event_attrs(), b.event_attrs(), "event");
        same_columns(a.case_attrs(), b.case_attrs(), "case");
    }

    #[test]
    fn round_trip_random_logs() {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(1849);
        for round in 0..300 {
            let log = random_log(&mut rng);
            let doc = write(&log).unwrap_or_else(|e| panic!("round {round}: {e}"));
            let XesLog { input, report, .. } = read_xes_bytes(doc.as_bytes())
                .unwrap_or_else(|e| panic!("round {round}: {e}\n{doc}"));
            assert!(
                report.type_conflicts.is_empty() && report.warnings.is_empty(),
                "{report:?}"
            );
            let (back, b) = EventLog::build(input).unwrap();
            assert_eq!(b.n_reordered, 0);
            assert_same_log(&log, &back);
            // Column order follows first appearance in the file, so the document is a fixed
            // point from the second write on.
            let doc2 = write(&back).unwrap();
            let again = EventLog::build(read_xes_bytes(doc2.as_bytes()).unwrap().input)
                .unwrap()
                .0;
            assert_eq!(write(&again).unwrap(), doc2, "round {round}");
        }
    }

    /// Writer throughput; run with
    /// `cargo test --release -- --ignored --nocapture xes_write_throughput`.
    #[test]
    #[ignore]
    fn xes_write_throughput() {
        use crate::xes::read::tests::{synthetic_xes, timed};
        let doc = synthetic_xes(200_000, 42);
        let (log, _) = EventLog::build(read_xes_bytes(&doc).unwrap().input).unwrap();
        let mut out = Vec::with_capacity(doc.len() + (1 << 20));
        let mut best = (f64::INFINITY, f64::INFINITY);
        for _ in 0..5 {
            out.clear();
            let (w, c) = timed(|| write_xes(&log, &mut out, &XesWriteOptions::default()).unwrap());
            best = (best.0.min(w), best.1.min(c.unwrap_or(w)));
        }
        let mb = out.len() as f64 / 1e6;
        println!(
            "XES write: {mb:.1} MB, 200000 events: {:.3} s wall = {:.0} MB/s; {:.3} s CPU = {:.0} MB/s",
            best.0,
            mb / best.0,
            best.1,
            mb / best.1
        );
    }
}
