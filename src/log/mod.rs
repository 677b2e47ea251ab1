//! The columnar event log.
//!
//! An [`EventLog`] is immutable once built. Events of one case are contiguous (CSR layout:
//! `offsets[c]..offsets[c + 1]` are the events of case `c`), ordered by timestamp, with ties kept
//! in input order. Activities, case labels and categorical attributes are dictionary-encoded
//! (`u32` codes); timestamps are `i64` nanoseconds since the Unix epoch, UTC.
//!
//! Derived views (variants, per-case statistics, directly-follows counts, ...) live in
//! [`views`]; selections that return new logs live in [`select`].
//!
//! ```
//! use tracemill::log::{LogInput, EventLog};
//! let input = LogInput::new(
//!     vec![0, 0, 1], vec!["c1".into(), "c2".into()],
//!     vec![0, 1, 0], vec!["register".into(), "repair".into()],
//!     vec![10, 20, 5],
//! );
//! let (log, report) = EventLog::build(input).unwrap();
//! assert_eq!(log.n_cases(), 2);
//! assert_eq!(log.trace(0), &[0, 1]);
//! assert_eq!(report.n_duplicates, 0);
//! ```

pub mod column;
pub mod factorize;
pub mod select;
pub mod views;

use std::sync::Arc;

use rayon::prelude::*;

pub use column::{Column, Values};

use crate::error::{TmError, TmResult};

/// How case attributes arrive at the builder.
#[derive(Debug, Clone, Default)]
pub enum CaseAttrs {
    /// None.
    #[default]
    None,
    /// One value per input row; the values of a case's rows must agree (nulls are ignored).
    PerRow(Vec<Column>),
    /// One value per case code (row `k` belongs to case code `k`).
    PerCase(Vec<Column>),
}

/// Columns for [`EventLog::build`], one entry per input row unless said otherwise.
#[derive(Debug, Clone, Default)]
pub struct LogInput {
    /// Case code of each row (index into `case_names`).
    pub case: Vec<u32>,
    /// Case labels; every code must occur in `case`.
    pub case_names: Vec<String>,
    /// Activity code of each row (index into `activity_names`).
    pub activity: Vec<u32>,
    /// Activity names.
    pub activity_names: Vec<String>,
    /// Timestamp of each row, ns since the epoch, UTC.
    pub time: Vec<i64>,
    /// Optional resource column (categorical).
    pub resource: Option<Column>,
    /// Optional lifecycle-transition column (categorical).
    pub lifecycle: Option<Column>,
    /// Further event attributes.
    pub event_attrs: Vec<Column>,
    /// Case attributes.
    pub case_attrs: CaseAttrs,
    /// Input row number of each row (defaults to 0..n); used in messages and kept per event.
    pub row: Option<Vec<u64>>,
}

impl LogInput {
    /// The minimal input: case, activity and time columns.
    pub fn new(
        case: Vec<u32>,
        case_names: Vec<String>,
        activity: Vec<u32>,
        activity_names: Vec<String>,
        time: Vec<i64>,
    ) -> Self {
        LogInput {
            case,
            case_names,
            activity,
            activity_names,
            time,
            ..Default::default()
        }
    }
}

/// What the builder noticed and repaired (never dropped): reported as warnings in Python.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct BuildReport {
    /// Events identical to an earlier event of the same case (same time, activity, resource and
    /// lifecycle). They are kept.
    pub n_duplicates: u64,
    /// Rows whose timestamp is earlier than the previous row of the same case in input order.
    /// They were moved into place.
    pub n_reordered: u64,
}

/// An immutable, columnar event log. See the module documentation.
#[derive(Debug)]
pub struct EventLog {
    pub(crate) activity_names: Arc<Vec<String>>,
    pub(crate) case_names: Arc<Vec<String>>,
    /// Per case: index into `case_names`.
    pub(crate) case_key: Vec<u32>,
    /// CSR offsets, `n_cases + 1` entries.
    pub(crate) offsets: Vec<usize>,
    pub(crate) activity: Vec<u32>,
    pub(crate) time: Vec<i64>,
    pub(crate) row: Vec<u64>,
    pub(crate) resource: Option<Column>,
    pub(crate) lifecycle: Option<Column>,
    pub(crate) event_attrs: Vec<Column>,
    pub(crate) case_attrs: Vec<Column>,
    pub(crate) cache: views::Cache,
}

/// Check that every code of a non-null row is inside the dictionary (codes under nulls are
/// unspecified, e.g. `u32::MAX`, and never read).
fn check_codes(
    name: &str,
    codes: &[u32],
    n: usize,
    valid: Option<&[bool]>,
    rows: Option<&[u64]>,
) -> TmResult<()> {
    let bad = |(i, &c): (usize, &u32)| c as usize >= n && valid.is_none_or(|v| v[i]);
    if let Some(i) = codes.iter().enumerate().position(bad) {
        let row = rows.map_or(i as u64, |r| r[i]);
        return Err(TmError::schema(
            name,
            Some(row),
            format!(
                "column '{name}', row {row}: code {} is outside the dictionary of {n} values",
                codes[i]
            ),
        ));
    }
    Ok(())
}

fn check_cat(col: &Column, what: &str) -> TmResult<()> {
    match &col.values {
        Values::Cat { codes, dict } => {
            check_codes(&col.name, codes, dict.len(), col.valid.as_deref(), None)
        }
        _ => Err(TmError::schema(
            col.name.clone(),
            None,
            format!(
                "the {what} column '{}' must be categorical (text)",
                col.name
            ),
        )),
    }
}

impl EventLog {
    /// Build a log from row-wise columns: group rows by case, sort each case by time (stable),
    /// collapse case attributes. Rows are never dropped.
    pub fn build(input: LogInput) -> TmResult<(EventLog, BuildReport)> {
        let n = input.case.len();
        if n == 0 {
            return Err(TmError::data(
                "the event log is empty: no events were given",
            ));
        }
        for (name, len) in [
            ("activity", input.activity.len()),
            ("timestamp", input.time.len()),
        ] {
            if len != n {
                return Err(TmError::schema(
                    name,
                    None,
                    format!("column '{name}' has {len} rows but the case column has {n}"),
                ));
            }
        }
        let rows: Vec<u64> = match input.row {
            Some(r) if r.len() == n => r,
            Some(r) => {
                return Err(TmError::schema(
                    "row",
                    None,
                    format!("row numbers have {} entries, expected {n}", r.len()),
                ))
            }
            None => (0..n as u64).collect(),
        };
        let n_cases = input.case_names.len();
        check_codes("case", &input.case, n_cases, None, Some(&rows))?;
        check_codes(
            "activity",
            &input.activity,
            input.activity_names.len(),
            None,
            Some(&rows),
        )?;
        let extra = input
            .resource
            .iter()
            .chain(input.lifecycle.iter())
            .chain(input.event_attrs.iter());
        for c in extra {
            if c.len() != n {
                return Err(TmError::schema(
                    c.name.clone(),
                    None,
                    format!("column '{}' has {} rows, expected {n}", c.name, c.len()),
                ));
            }
        }
        if let Some(c) = &input.resource {
            check_cat(c, "resource")?;
        }
        if let Some(c) = &input.lifecycle {
            check_cat(c, "lifecycle")?;
        }
        let attrs = match &input.case_attrs {
            CaseAttrs::None => &[][..],
            CaseAttrs::PerRow(c) | CaseAttrs::PerCase(c) => &c[..],
        };
        for c in input.event_attrs.iter().chain(attrs) {
            if matches!(c.values, Values::Cat { .. }) {
                check_cat(c, "attribute")?;
            }
        }

        // Counting sort by case code (stable: input order kept within a case).
        let mut counts = vec![0usize; n_cases + 1];
        for &c in &input.case {
            counts[c as usize + 1] += 1;
        }
        if let Some(k) = counts[1..].iter().position(|&x| x == 0) {
            return Err(TmError::data(format!(
                "case '{}' has no events",
                input.case_names[k]
            )));
        }
        for i in 0..n_cases {
            counts[i + 1] += counts[i];
        }
        let offsets = counts.clone();
        let mut next = counts;
        let mut order = vec![0usize; n];
        for (i, &c) in input.case.iter().enumerate() {
            let slot = &mut next[c as usize];
            order[*slot] = i;
            *slot += 1;
        }
        // Within each case: stable sort by time; count rows that were out of place.
        let time = &input.time;
        let n_reordered: u64 = par_chunks_by_offsets(&mut order, &offsets)
            .map(|seg| {
                let mut bad = 0u64;
                for w in seg.windows(2) {
                    if time[w[1]] < time[w[0]] {
                        bad += 1;
                    }
                }
                if bad > 0 {
                    seg.sort_by_key(|&i| time[i]);
                }
                bad
            })
            .sum();

        let g = |v: &Vec<u32>| -> Vec<u32> { order.par_iter().map(|&i| v[i]).collect() };
        let activity = g(&input.activity);
        let time: Vec<i64> = order.par_iter().map(|&i| input.time[i]).collect();
        let row: Vec<u64> = order.par_iter().map(|&i| rows[i]).collect();
        let resource = input.resource.map(|c| c.gather(&order).normalised());
        let lifecycle = input.lifecycle.map(|c| c.gather(&order).normalised());
        let event_attrs: Vec<Column> = input
            .event_attrs
            .iter()
            .map(|c| c.gather(&order).normalised())
            .collect();
        let case_attrs = match input.case_attrs {
            CaseAttrs::None => Vec::new(),
            CaseAttrs::PerCase(cols) => {
                for c in &cols {
                    if c.len() != n_cases {
                        return Err(TmError::schema(
                            c.name.clone(),
                            None,
                            format!(
                                "case attribute '{}' has {} values, expected one per case ({n_cases})",
                                c.name,
                                c.len()
                            ),
                        ));
                    }
                }
                cols.into_iter().map(Column::normalised).collect()
            }
            CaseAttrs::PerRow(cols) => {
                let mut out = Vec::with_capacity(cols.len());
                for c in &cols {
                    if c.len() != n {
                        return Err(TmError::schema(
                            c.name.clone(),
                            None,
                            format!("column '{}' has {} rows, expected {n}", c.name, c.len()),
                        ));
                    }
                    out.push(collapse_case_attr(
                        c,
                        &order,
                        &offsets,
                        &rows,
                        &input.case_names,
                    )?);
                }
                out
            }
        };
        let log = EventLog {
            activity_names: Arc::new(input.activity_names),
            case_names: Arc::new(input.case_names),
            case_key: (0..n_cases as u32).collect(),
            offsets,
            activity,
            time,
            row,
            resource,
            lifecycle,
            event_attrs,
            case_attrs,
            cache: views::Cache::default(),
        };
        let n_duplicates = log.count_duplicates();
        Ok((
            log,
            BuildReport {
                n_duplicates,
                n_reordered,
            },
        ))
    }

    fn count_duplicates(&self) -> u64 {
        let res = self.resource.as_ref();
        let lc = self.lifecycle.as_ref();
        let same = |i: usize, j: usize| -> bool {
            self.activity[i] == self.activity[j]
                && res.is_none_or(|c| same_cell(c, i, j))
                && lc.is_none_or(|c| same_cell(c, i, j))
        };
        (0..self.n_cases())
            .into_par_iter()
            .map(|c| {
                let (s, e) = (self.offsets[c], self.offsets[c + 1]);
                let mut dup = 0u64;
                let mut run_start = s;
                for i in s..e {
                    if self.time[i] != self.time[run_start] {
                        run_start = i;
                    }
                    if (run_start..i).any(|j| same(i, j)) {
                        dup += 1;
                    }
                }
                dup
            })
            .sum()
    }

    /// Number of cases.
    pub fn n_cases(&self) -> usize {
        self.offsets.len() - 1
    }
    /// Number of events.
    pub fn n_events(&self) -> usize {
        self.activity.len()
    }
    /// Activity dictionary.
    pub fn activity_names(&self) -> &[String] {
        &self.activity_names
    }
    /// Case-label dictionary (shared by logs selected from one another).
    pub fn case_names(&self) -> &[String] {
        &self.case_names
    }
    /// The label of case `c`.
    pub fn case_name(&self, c: usize) -> &str {
        &self.case_names[self.case_key[c] as usize]
    }
    /// Per case: index into [`EventLog::case_names`].
    pub fn case_keys(&self) -> &[u32] {
        &self.case_key
    }
    /// CSR offsets (`n_cases + 1`).
    pub fn offsets(&self) -> &[usize] {
        &self.offsets
    }
    /// Activity code of every event.
    pub fn activities(&self) -> &[u32] {
        &self.activity
    }
    /// Timestamp of every event (ns, UTC).
    pub fn times(&self) -> &[i64] {
        &self.time
    }
    /// Input row of every event.
    pub fn rows(&self) -> &[u64] {
        &self.row
    }
    /// The activity codes of case `c`.
    pub fn trace(&self, c: usize) -> &[u32] {
        &self.activity[self.offsets[c]..self.offsets[c + 1]]
    }
    /// The timestamps of case `c`.
    pub fn trace_times(&self, c: usize) -> &[i64] {
        &self.time[self.offsets[c]..self.offsets[c + 1]]
    }
    /// The resource column, if any.
    pub fn resource(&self) -> Option<&Column> {
        self.resource.as_ref()
    }
    /// The lifecycle column, if any.
    pub fn lifecycle(&self) -> Option<&Column> {
        self.lifecycle.as_ref()
    }
    /// Event attribute columns.
    pub fn event_attrs(&self) -> &[Column] {
        &self.event_attrs
    }
    /// Case attribute columns (one row per case).
    pub fn case_attrs(&self) -> &[Column] {
        &self.case_attrs
    }
    /// A case attribute by name.
    pub fn case_attr(&self, name: &str) -> Option<&Column> {
        self.case_attrs.iter().find(|c| c.name == name)
    }
    /// An event attribute by name.
    pub fn event_attr(&self, name: &str) -> Option<&Column> {
        self.event_attrs.iter().find(|c| c.name == name)
    }
    /// Number of events of case `c`.
    pub fn case_len(&self, c: usize) -> usize {
        self.offsets[c + 1] - self.offsets[c]
    }
}

fn same_cell(c: &Column, i: usize, j: usize) -> bool {
    if c.is_valid(i) != c.is_valid(j) {
        return false;
    }
    if !c.is_valid(i) {
        return true;
    }
    match &c.values {
        Values::F64(v) => v[i].to_bits() == v[j].to_bits(),
        Values::I64(v) | Values::Time(v) => v[i] == v[j],
        Values::Bool(v) => v[i] == v[j],
        Values::Cat { codes, .. } => codes[i] == codes[j],
    }
}

/// Split `v` into the mutable segments `offsets[k]..offsets[k+1]`, as a parallel iterator.
pub(crate) fn par_chunks_by_offsets<'a, T: Send>(
    v: &'a mut [T],
    offsets: &[usize],
) -> impl IndexedParallelIterator<Item = &'a mut [T]> {
    let mut segs = Vec::with_capacity(offsets.len().saturating_sub(1));
    let mut rest = v;
    for w in offsets.windows(2) {
        let (a, b) = std::mem::take(&mut rest).split_at_mut(w[1] - w[0]);
        segs.push(a);
        rest = b;
    }
    segs.into_par_iter()
}

fn collapse_case_attr(
    c: &Column,
    order: &[usize],
    offsets: &[usize],
    rows: &[u64],
    case_names: &[String],
) -> TmResult<Column> {
    let n_cases = offsets.len() - 1;
    // For each case, the first valid row (in sorted order), then a check that others agree.
    let picks: Vec<TmResult<Option<usize>>> = (0..n_cases)
        .into_par_iter()
        .map(|k| {
            let seg = &order[offsets[k]..offsets[k + 1]];
            let mut first: Option<usize> = None;
            for &i in seg {
                if !c.is_valid(i) {
                    continue;
                }
                match first {
                    None => first = Some(i),
                    Some(f) if !same_cell(c, f, i) => {
                        return Err(TmError::schema(
                            c.name.clone(),
                            Some(rows[i]),
                            format!(
                                "case attribute '{}' has conflicting values for case '{}': '{}' (row {}) and '{}' (row {}); a case attribute must have one value per case",
                                c.name,
                                case_names[k],
                                c.values.text(f),
                                rows[f],
                                c.values.text(i),
                                rows[i]
                            ),
                        ))
                    }
                    Some(_) => {}
                }
            }
            Ok(first)
        })
        .collect();
    let mut idx = Vec::with_capacity(n_cases);
    let mut valid = Vec::with_capacity(n_cases);
    for p in picks {
        match p? {
            Some(i) => {
                idx.push(i);
                valid.push(true);
            }
            None => {
                idx.push(order[offsets[idx.len()]]);
                valid.push(false);
            }
        }
    }
    let mut out = c.gather(&idx);
    out.valid = Some(valid);
    Ok(out.normalised())
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;

    /// A small log from `(case, activity, time)` rows with single-letter names.
    pub fn log_from(rows: &[(&str, &str, i64)]) -> EventLog {
        let mut cases: Vec<String> = Vec::new();
        let mut acts: Vec<String> = Vec::new();
        let mut input = LogInput::default();
        for (c, a, t) in rows {
            let ci = cases.iter().position(|x| x == c).unwrap_or_else(|| {
                cases.push((*c).to_string());
                cases.len() - 1
            });
            let ai = acts.iter().position(|x| x == a).unwrap_or_else(|| {
                acts.push((*a).to_string());
                acts.len() - 1
            });
            input.case.push(ci as u32);
            input.activity.push(ai as u32);
            input.time.push(*t);
        }
        input.case_names = cases;
        input.activity_names = acts;
        EventLog::build(input).unwrap().0
    }

    #[test]
    fn sorts_by_case_then_time_stably() {
        let log = log_from(&[
            ("x", "b", 5),
            ("y", "a", 1),
            ("x", "a", 1),
            ("x", "c", 5),
            ("y", "b", 0),
        ]);
        assert_eq!(log.n_cases(), 2);
        let names = log.activity_names();
        let t0: Vec<&str> = log
            .trace(0)
            .iter()
            .map(|&a| names[a as usize].as_str())
            .collect();
        assert_eq!(t0, ["a", "b", "c"]); // tie b,c at 5 kept in input order
        assert_eq!(log.trace_times(1), &[0, 1]);
        assert_eq!(log.rows(), &[2, 0, 3, 4, 1]);
    }

    #[test]
    fn reports_duplicates_and_reordering() {
        let mut input = LogInput::new(
            vec![0, 0, 0, 0],
            vec!["c".into()],
            vec![0, 1, 0, 0],
            vec!["a".into(), "b".into()],
            vec![3, 3, 3, 1],
        );
        input.row = None;
        let (log, rep) = EventLog::build(input).unwrap();
        assert_eq!(log.n_events(), 4);
        assert_eq!(rep.n_duplicates, 1);
        assert_eq!(rep.n_reordered, 1);
    }

    #[test]
    fn rejects_empty_and_bad_codes() {
        assert!(matches!(
            EventLog::build(LogInput::default()),
            Err(TmError::Data { .. })
        ));
        let input = LogInput::new(
            vec![0, 1],
            vec!["c".into()],
            vec![0, 0],
            vec!["a".into()],
            vec![1, 2],
        );
        let err = EventLog::build(input).unwrap_err();
        assert!(
            matches!(err, TmError::Schema { row: Some(1), .. }),
            "{err:?}"
        );
    }

    #[test]
    fn null_codes_are_not_checked_but_bad_codes_are() {
        let mut input = LogInput::new(
            vec![0, 0],
            vec!["c".into()],
            vec![0, 0],
            vec!["a".into()],
            vec![1, 2],
        );
        let dict = Arc::new(vec!["ana".to_string()]);
        input.resource = Some(Column {
            name: "resource".into(),
            values: Values::Cat {
                codes: vec![0, u32::MAX],
                dict: Arc::clone(&dict),
            },
            valid: Some(vec![true, false]),
        });
        let (log, _) = EventLog::build(input.clone()).unwrap();
        assert_eq!(log.resource().unwrap().null_count(), 1);
        input.event_attrs = vec![Column::new(
            "part",
            Values::Cat {
                codes: vec![0, 3],
                dict,
            },
        )];
        let err = EventLog::build(input).unwrap_err();
        assert!(
            matches!(err, TmError::Schema { row: Some(1), .. }),
            "{err:?}"
        );
    }

    #[test]
    fn conflicting_case_attribute_is_an_error() {
        let mut input = LogInput::new(
            vec![0, 0, 1],
            vec!["c1".into(), "c2".into()],
            vec![0, 0, 0],
            vec!["a".into()],
            vec![1, 2, 3],
        );
        input.case_attrs = CaseAttrs::PerRow(vec![Column {
            name: "size".into(),
            values: Values::I64(vec![1, 2, 7]),
            valid: None,
        }]);
        let err = EventLog::build(input.clone()).unwrap_err();
        assert!(
            err.to_string().contains("conflicting values for case 'c1'"),
            "{err}"
        );
        input.case_attrs = CaseAttrs::PerRow(vec![Column {
            name: "size".into(),
            values: Values::I64(vec![1, 0, 7]),
            valid: Some(vec![true, false, true]),
        }]);
        let (log, _) = EventLog::build(input).unwrap();
        assert_eq!(
            log.case_attr("size").unwrap().values,
            Values::I64(vec![1, 7])
        );
    }
}
