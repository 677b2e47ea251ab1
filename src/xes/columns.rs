//! Column builders of the XES reader: typed values, dictionaries and per-key columns that
//! fall back to text on a type conflict, plus aggregated warnings.
//!
//! A column is typed by its first value (`int` → `i64`, `float` → `f64`, `boolean` → bool,
//! `date` → time, `string`/`id` → dictionary-encoded text). A later value of another type, or
//! a value its declared type cannot parse, turns the whole column into text, rendering the
//! values already stored (floats in shortest round-trip form, dates in canonical
//! `xs:dateTime`), so that nothing is lost, and records why.

use std::collections::HashMap;
use std::sync::Arc;

use super::input::utf8;
#[allow(unused_imports)] // for the doc link
use super::read::XesReadOptions;
use super::read::{XesReport, XesType, XesValue};
use super::time::{format_ns_into, parse_datetime_bytes};
use crate::error::{TmError, TmResult};
use crate::log::{Column, Values};

/// A parsed attribute value, borrowing text from the read buffer.
#[derive(Debug, Clone, Copy)]
pub(super) enum Val<'a> {
    Text(&'a [u8]),
    Int(i64),
    Float(f64),
    Bool(bool),
    Date(i64),
    /// The text could not be parsed as the declared type.
    Bad(&'a [u8]),
}

fn parse_int(raw: &[u8]) -> Option<i64> {
    std::str::from_utf8(raw.trim_ascii()).ok()?.parse().ok()
}

fn parse_float(raw: &[u8]) -> Option<f64> {
    let t = raw.trim_ascii();
    // xs:double spells the specials INF, -INF, NaN; Rust's parser accepts these and more.
    std::str::from_utf8(t).ok()?.parse().ok()
}

fn parse_bool(raw: &[u8]) -> Option<bool> {
    let t = raw.trim_ascii();
    if t == b"1" || t.eq_ignore_ascii_case(b"true") {
        Some(true)
    } else if t == b"0" || t.eq_ignore_ascii_case(b"false") {
        Some(false)
    } else {
        None
    }
}

pub(super) fn parse_val(ty: XesType, raw: &[u8]) -> Val<'_> {
    let v = match ty {
        XesType::String | XesType::Id | XesType::List | XesType::Container => Some(Val::Text(raw)),
        XesType::Int => parse_int(raw).map(Val::Int),
        XesType::Float => parse_float(raw).map(Val::Float),
        XesType::Boolean => parse_bool(raw).map(Val::Bool),
        XesType::Date => parse_datetime_bytes(raw).ok().map(Val::Date),
    };
    v.unwrap_or(Val::Bad(raw))
}

/// Shortest text that parses back to the same `f64`, in `xs:double` spelling.
pub(crate) fn push_f64(out: &mut Vec<u8>, x: f64) {
    use std::io::Write;
    if x.is_nan() {
        out.extend_from_slice(b"NaN");
    } else if x.is_infinite() {
        out.extend_from_slice(if x > 0.0 { b"INF" } else { b"-INF" });
    } else {
        let a = x.abs();
        // Writing to a Vec cannot fail.
        let _ = if a == 0.0 || (1e-5..1e16).contains(&a) {
            write!(out, "{x}")
        } else {
            write!(out, "{x:e}")
        };
    }
}

fn val_text(v: Val<'_>, out: &mut Vec<u8>) {
    use std::io::Write;
    match v {
        Val::Text(t) | Val::Bad(t) => out.extend_from_slice(t),
        Val::Int(i) => {
            let _ = write!(out, "{i}");
        }
        Val::Float(x) => push_f64(out, x),
        Val::Bool(b) => out.extend_from_slice(if b { b"true" } else { b"false" }),
        Val::Date(t) => format_ns_into(out, t),
    }
}

pub(super) fn xes_value(
    ty: XesType,
    raw: &[u8],
    line: u64,
    warn: &mut Warnings,
) -> TmResult<XesValue> {
    let text = || utf8(raw, line, "an attribute value").map(str::to_owned);
    Ok(match (ty, parse_val(ty, raw)) {
        (XesType::Id, _) => XesValue::Id(text()?),
        (_, Val::Int(i)) => XesValue::Int(i),
        (_, Val::Float(x)) => XesValue::Float(x),
        (_, Val::Bool(b)) => XesValue::Boolean(b),
        (_, Val::Date(t)) => XesValue::Date(t),
        (_, Val::Text(_)) => XesValue::String(text()?),
        (_, Val::Bad(_)) => {
            warn.note(
                format!(
                    "a log-level or global {} value that does not parse, kept as string",
                    ty.tag()
                ),
                line,
            );
            XesValue::String(text()?)
        }
    })
}

/// A dictionary from text to `u32` codes, looked up by bytes without allocating.
#[derive(Debug, Default)]
pub(super) struct Interner {
    pub(super) map: HashMap<Box<[u8]>, u32>,
    pub(super) names: Vec<String>,
}

impl Interner {
    pub(super) fn code(&mut self, b: &[u8], line: u64, what: &str) -> TmResult<u32> {
        if let Some(&c) = self.map.get(b) {
            return Ok(c);
        }
        let s = utf8(b, line, what)?;
        let c = u32::try_from(self.names.len()).map_err(|_| TmError::Limit {
            message: format!("{what}: more than 2^32 distinct values"),
        })?;
        self.names.push(s.to_owned());
        self.map.insert(b.into(), c);
        Ok(c)
    }
}

#[derive(Debug)]
enum Store {
    /// Only nulls so far (the count); typed on the first value.
    Empty(usize),
    F64(Vec<f64>),
    I64(Vec<i64>),
    Bool(Vec<bool>),
    Time(Vec<i64>),
    Text(Vec<u32>, Interner),
}

impl Store {
    fn push_null(&mut self) {
        match self {
            Store::Empty(n) => *n += 1,
            Store::F64(v) => v.push(0.0),
            Store::I64(v) | Store::Time(v) => v.push(0),
            Store::Bool(v) => v.push(false),
            Store::Text(v, _) => v.push(0),
        }
    }
    fn type_name(&self) -> &'static str {
        match self {
            Store::Empty(_) => "null",
            Store::F64(_) => "float",
            Store::I64(_) => "int",
            Store::Bool(_) => "boolean",
            Store::Time(_) => "date",
            Store::Text(..) => "string",
        }
    }
}

fn val_type_name(v: &Val<'_>) -> &'static str {
    match v {
        Val::Text(_) | Val::Bad(_) => "string",
        Val::Int(_) => "int",
        Val::Float(_) => "float",
        Val::Bool(_) => "boolean",
        Val::Date(_) => "date",
    }
}

/// One output column being filled row by row (rows are events or cases).
#[derive(Debug)]
pub(super) struct ColBuilder {
    pub(super) name: String,
    store: Store,
    valid: Vec<bool>,
    any_null: bool,
    /// Line of the first value (for conflict messages).
    first_line: u64,
    /// Already turned into text because of a conflict.
    fell_back: bool,
    /// Only text is stored whatever the declared type (resource, lifecycle).
    text_only: bool,
}

impl ColBuilder {
    pub(super) fn new(name: String, text_only: bool) -> Self {
        ColBuilder {
            name,
            store: Store::Empty(0),
            valid: Vec::new(),
            any_null: false,
            first_line: 0,
            fell_back: false,
            text_only,
        }
    }

    pub(super) fn len(&self) -> usize {
        self.valid.len()
    }

    pub(super) fn pad(&mut self, n: usize) {
        while self.valid.len() < n {
            self.store.push_null();
            self.valid.push(false);
            self.any_null = true;
        }
    }

    /// Turn the column into text, rendering every value already stored.
    pub(super) fn fall_back_to_text(&mut self) {
        let mut dict = Interner::default();
        let mut tmp = Vec::new();
        let mut text = |v: Val<'_>| -> u32 {
            tmp.clear();
            val_text(v, &mut tmp);
            // Rendered numbers and dates are ASCII; line 0 is never reported.
            dict.code(&tmp, 0, "a value").unwrap_or(0)
        };
        let codes: Vec<u32> = match &self.store {
            Store::Empty(n) => vec![0; *n],
            Store::Text(..) => return,
            Store::F64(v) => v.iter().map(|&x| text(Val::Float(x))).collect(),
            Store::I64(v) => v.iter().map(|&x| text(Val::Int(x))).collect(),
            Store::Time(v) => v.iter().map(|&x| text(Val::Date(x))).collect(),
            Store::Bool(v) => v.iter().map(|&x| text(Val::Bool(x))).collect(),
        };
        self.store = Store::Text(codes, dict);
    }

    /// Set row `row` (which must be `>= len()`) to `v`.
    pub(super) fn set(
        &mut self,
        row: usize,
        v: Val<'_>,
        ty: XesType,
        line: u64,
        what: &str,
        conflicts: &mut Vec<String>,
    ) -> TmResult<()> {
        self.pad(row);
        if let Store::Empty(n) = self.store {
            // First value: the column takes its type.
            self.first_line = line;
            self.store = match v {
                _ if self.text_only => Store::Text(vec![0; n], Interner::default()),
                Val::Int(_) => Store::I64(vec![0; n]),
                Val::Float(_) => Store::F64(vec![0.0; n]),
                Val::Bool(_) => Store::Bool(vec![false; n]),
                Val::Date(_) => Store::Time(vec![0; n]),
                Val::Text(_) | Val::Bad(_) => Store::Text(vec![0; n], Interner::default()),
            };
        }
        let v = if self.text_only {
            match v {
                Val::Bad(t) => Val::Text(t),
                other => other,
            }
        } else {
            v
        };
        let fits = matches!(
            (&self.store, &v),
            (Store::F64(_), Val::Float(_))
                | (Store::I64(_), Val::Int(_))
                | (Store::Bool(_), Val::Bool(_))
                | (Store::Time(_), Val::Date(_))
                | (Store::Text(..), Val::Text(_))
        );
        if !fits && !self.fell_back && !self.text_only {
            let msg = match v {
                Val::Bad(t) => format!(
                    "{what} '{}': the {} value '{}' on line {line} does not parse; \
                     the column is kept as text",
                    self.name,
                    ty.tag(),
                    String::from_utf8_lossy(t)
                ),
                _ => format!(
                    "{what} '{}': {} values (first on line {}) and a {} value on line {line}; \
                     the column is kept as text",
                    self.name,
                    self.store.type_name(),
                    self.first_line,
                    val_type_name(&v)
                ),
            };
            conflicts.push(msg);
            self.fell_back = true;
            self.fall_back_to_text();
        }
        match (&mut self.store, v) {
            (Store::F64(s), Val::Float(x)) => s.push(x),
            (Store::I64(s), Val::Int(x)) => s.push(x),
            (Store::Bool(s), Val::Bool(x)) => s.push(x),
            (Store::Time(s), Val::Date(x)) => s.push(x),
            (Store::Text(s, dict), Val::Text(t)) => s.push(dict.code(t, line, what)?),
            (Store::Text(s, dict), other) => {
                let mut tmp = Vec::new();
                val_text(other, &mut tmp);
                s.push(dict.code(&tmp, line, what)?);
            }
            _ => {
                return Err(TmError::Internal {
                    message: format!(
                        "XES reader: column '{}' did not take a value (please report)",
                        self.name
                    ),
                })
            }
        }
        self.valid.push(true);
        Ok(())
    }

    pub(super) fn finish(mut self, n: usize) -> Option<Column> {
        self.pad(n);
        let valid = if self.any_null {
            Some(self.valid)
        } else {
            None
        };
        let values = match self.store {
            Store::Empty(_) => return None,
            Store::F64(v) => Values::F64(v),
            Store::I64(v) => Values::I64(v),
            Store::Bool(v) => Values::Bool(v),
            Store::Time(v) => Values::Time(v),
            Store::Text(codes, dict) => Values::Cat {
                codes,
                dict: Arc::new(dict.names),
            },
        };
        Some(Column {
            name: self.name,
            values,
            valid,
        })
    }
}

/// A set of columns addressed by key bytes.
#[derive(Debug)]
pub(super) struct Columns {
    pub(super) index: HashMap<Box<[u8]>, usize>,
    pub(super) cols: Vec<ColBuilder>,
    /// Per repeated key: the row and suffix of its last repeat, so that `m` repeats in one
    /// element cost `O(m)`, not `O(m^2)`.
    dup: HashMap<Box<[u8]>, (usize, u32)>,
    /// Budget of columns × rows (`XesReadOptions::max_attribute_cells`).
    max_cells: u64,
    /// "event" or "case", for messages.
    scope: &'static str,
    /// The column found by the last lookup.
    last: usize,
}

impl Default for Columns {
    fn default() -> Self {
        Columns::new(u64::MAX, "event")
    }
}

impl Columns {
    pub(super) fn new(max_cells: u64, scope: &'static str) -> Self {
        Columns {
            index: HashMap::new(),
            cols: Vec::new(),
            dup: HashMap::new(),
            max_cells,
            scope,
            last: 0,
        }
    }

    /// Fail when `n_cols` columns of `n_rows` rows would exceed the cell budget.
    pub(super) fn check_budget(&self, n_cols: usize, n_rows: usize) -> TmResult<()> {
        let cells = (n_cols as u64).saturating_mul(n_rows as u64);
        if cells > self.max_cells {
            return Err(TmError::Limit {
                message: format!(
                    "the XES file has {n_cols} distinct {scope} attribute keys over {n_rows} {scope}s \
                     ({cells} cells), more than max_attribute_cells = {}; raise it in \
                     XesReadOptions if the memory is there",
                    self.max_cells,
                    scope = self.scope,
                ),
            });
        }
        Ok(())
    }

    /// The column for `key`, created if new (`row` is the current row, for the budget).
    pub(super) fn get(&mut self, key: &[u8], row: usize, line: u64) -> TmResult<usize> {
        // Elements usually list their keys in the same order, so first try the column after
        // the one found last: a byte comparison instead of hashing.
        let guess = if self.last + 1 < self.cols.len() {
            self.last + 1
        } else {
            0
        };
        if self
            .cols
            .get(guess)
            .is_some_and(|c| c.name.as_bytes() == key)
        {
            self.last = guess;
            return Ok(guess);
        }
        if let Some(&i) = self.index.get(key) {
            self.last = i;
            return Ok(i);
        }
        self.check_budget(self.cols.len() + 1, row + 1)?;
        let name = utf8(key, line, "an attribute key")?.to_owned();
        let i = self.cols.len();
        self.cols.push(ColBuilder::new(name, false));
        self.index.insert(key.into(), i);
        self.last = i;
        Ok(i)
    }

    /// The column for `key` whose row `row` is still free: `key`, else `key#2`, `key#3`, ...
    /// (`first_suffix >= 2` skips `key` itself, for keys held outside these columns).
    pub(super) fn free_slot(
        &mut self,
        key: &[u8],
        row: usize,
        line: u64,
        first_suffix: u32,
        rep: &mut XesReport,
        warn: &mut Warnings,
    ) -> TmResult<usize> {
        if first_suffix < 2 {
            let i = self.get(key, row, line)?;
            if self.cols[i].len() <= row {
                return Ok(i);
            }
        }
        rep.n_repeated_keys += 1;
        warn.note(
            format!(
                "the key '{}' repeats within one element; later values are stored under '{}#2', '#3', ...",
                String::from_utf8_lossy(key),
                String::from_utf8_lossy(key)
            ),
            line,
        );
        let mut k = match self.dup.get(key) {
            Some(&(r, last)) if r == row => last + 1,
            _ => first_suffix.max(2),
        };
        let mut name = Vec::with_capacity(key.len() + 4);
        loop {
            name.clear();
            name.extend_from_slice(key);
            name.push(b'#');
            name.extend_from_slice(k.to_string().as_bytes());
            let i = self.get(&name, row, line)?;
            if self.cols[i].len() <= row {
                self.dup.insert(key.into(), (row, k));
                return Ok(i);
            }
            k += 1;
        }
    }

    pub(super) fn finish(self, n: usize) -> Vec<Column> {
        self.cols.into_iter().filter_map(|c| c.finish(n)).collect()
    }
}

/// Distinct warnings kept; further distinct ones are only counted.
const MAX_WARNINGS: usize = 1000;

/// Warnings aggregated by message: first line and count, so that a repeated oddity costs one
/// entry, not one per occurrence; at most [`MAX_WARNINGS`] distinct messages.
#[derive(Debug, Default)]
pub(super) struct Warnings {
    pub(super) index: HashMap<String, usize>,
    pub(super) list: Vec<(String, u64, u64)>,
    pub(super) dropped: u64,
}

impl Warnings {
    pub(super) fn note(&mut self, msg: String, line: u64) {
        match self.index.get(&msg) {
            Some(&i) => self.list[i].2 += 1,
            None if self.list.len() >= MAX_WARNINGS => self.dropped += 1,
            None => {
                self.index.insert(msg.clone(), self.list.len());
                self.list.push((msg, line, 1));
            }
        }
    }
    pub(super) fn finish(self) -> Vec<String> {
        let dropped = self.dropped;
        let mut out: Vec<String> = self
            .list
            .into_iter()
            .map(|(m, line, n)| {
                if n == 1 {
                    format!("line {line}: {m}")
                } else {
                    format!("line {line} (and {} more times): {m}", n - 1)
                }
            })
            .collect();
        if dropped > 0 {
            out.push(format!(
                "{dropped} further warnings of other kinds were not listed (only the first \
                 {MAX_WARNINGS} distinct warnings are kept)"
            ));
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn set(c: &mut ColBuilder, row: usize, ty: XesType, raw: &str, conflicts: &mut Vec<String>) {
        c.set(
            row,
            parse_val(ty, raw.as_bytes()),
            ty,
            row as u64 + 1,
            "event attribute",
            conflicts,
        )
        .unwrap();
    }

    #[test]
    fn first_value_types_the_column_and_nulls_are_padded() {
        let mut c = ColBuilder::new("size".into(), false);
        let mut conflicts = Vec::new();
        set(&mut c, 1, XesType::Int, " 42 ", &mut conflicts);
        set(&mut c, 2, XesType::Int, "-7", &mut conflicts);
        let col = c.finish(4).unwrap();
        assert_eq!(col.values, Values::I64(vec![0, 42, -7, 0]));
        assert_eq!(col.valid, Some(vec![false, true, true, false]));
        assert!(conflicts.is_empty());
    }

    #[test]
    fn a_second_type_turns_the_column_into_text_keeping_every_value() {
        let mut c = ColBuilder::new("x".into(), false);
        let mut conflicts = Vec::new();
        set(&mut c, 0, XesType::Float, "0.1", &mut conflicts);
        set(
            &mut c,
            1,
            XesType::Date,
            "2016-02-29T12:00:00+01:00",
            &mut conflicts,
        );
        set(&mut c, 2, XesType::Boolean, "1", &mut conflicts);
        set(&mut c, 3, XesType::String, "free text", &mut conflicts);
        let col = c.finish(4).unwrap();
        let texts: Vec<String> = (0..4).map(|i| col.values.text(i)).collect();
        assert_eq!(
            texts,
            ["0.1", "2016-02-29T11:00:00+00:00", "true", "free text"]
        );
        assert_eq!(conflicts.len(), 1, "{conflicts:?}");
        assert!(conflicts[0].contains("float values (first on line 1) and a date value on line 2"));
    }

    #[test]
    fn value_parsers_follow_xml_schema_lexical_forms() {
        // XML Schema Part 2: boolean is {true, false, 1, 0}; double allows INF, -INF, NaN.
        assert_eq!(parse_bool(b"1"), Some(true));
        assert_eq!(parse_bool(b"false"), Some(false));
        assert_eq!(parse_bool(b"yes"), None);
        assert_eq!(parse_float(b"-INF"), Some(f64::NEG_INFINITY));
        assert!(parse_float(b"NaN").is_some_and(f64::is_nan));
        assert_eq!(parse_float(b"1.5E1"), Some(15.0));
        assert_eq!(parse_int(b"9223372036854775807"), Some(i64::MAX));
        assert_eq!(parse_int(b"9223372036854775808"), None);
        assert_eq!(parse_int(b"1.0"), None);
        assert!(matches!(
            parse_val(XesType::Date, b"yesterday"),
            Val::Bad(_)
        ));
    }

    #[test]
    fn repeated_keys_get_suffixes_and_warnings_aggregate() {
        let mut cols = Columns::default();
        let mut rep = XesReport::default();
        let mut warn = Warnings::default();
        let a = cols.free_slot(b"k", 0, 1, 0, &mut rep, &mut warn).unwrap();
        let mut conflicts = Vec::new();
        set(&mut cols.cols[a], 0, XesType::Int, "1", &mut conflicts);
        let b = cols.free_slot(b"k", 0, 2, 0, &mut rep, &mut warn).unwrap();
        assert_eq!(cols.cols[b].name, "k#2");
        set(&mut cols.cols[b], 0, XesType::Int, "2", &mut conflicts);
        let c = cols.free_slot(b"k", 0, 3, 0, &mut rep, &mut warn).unwrap();
        assert_eq!(cols.cols[c].name, "k#3");
        assert_eq!(rep.n_repeated_keys, 2);
        let w = warn.finish();
        assert_eq!(w.len(), 1);
        assert!(w[0].starts_with("line 2 (and 1 more times):"), "{w:?}");
    }

    #[test]
    fn interner_refuses_invalid_utf8_with_the_line() {
        let mut i = Interner::default();
        assert_eq!(i.code(b"a", 1, "x").unwrap(), 0);
        assert_eq!(i.code(b"a", 1, "x").unwrap(), 0);
        let err = i.code(&[0xff], 9, "an activity").unwrap_err();
        assert!(matches!(err, TmError::Format { line: Some(9), .. }));
    }
}
