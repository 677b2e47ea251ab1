//! The declarative process description read by the simulator.
//!
//! A [`ProcessSpec`] is plain data with a JSON form (serde). It says *what* a process does:
//! how often cases arrive, which hidden segment each case belongs to, which attributes it
//! carries, which activities it performs in which order (a tree of steps, sequences, exclusive
//! choices, parallel blocks and loops), who performs them (resource pools with a capacity and
//! optional working hours), how long they take, and which deviations and which change of
//! behaviour (drift) to plant. The engine ([`super::simulate`]) turns it into an event log plus
//! the ground truth.
//!
//! Every duration, inter-arrival mean and distribution of time is expressed in
//! [`ProcessSpec::time_unit`] (minutes unless said otherwise). Date-times are ISO 8601 strings
//! (`"2025-01-06"`, `"2025-01-06T08:00:00Z"`, `"2025-01-06T09:00:00+01:00"`) or integers
//! (nanoseconds since the Unix epoch); a time without an offset is read as UTC.
//!
//! [`ProcessSpec::from_json`] checks the whole description and names the JSON path of a bad
//! element, e.g. `flow.sequence[2].choice[1].p must be in [0, 1]`. The reference of the format
//! is in the documentation of the [`super`] module.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use crate::error::{TmError, TmResult};

/// A point in time: an ISO 8601 string or nanoseconds since the Unix epoch (UTC).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum TimeSpec {
    /// Nanoseconds since the Unix epoch, UTC.
    Ns(i64),
    /// An ISO 8601 date or date-time; no offset means UTC.
    Iso(String),
}

impl TimeSpec {
    /// The time as nanoseconds since the epoch; `path` names the element in error messages.
    pub fn to_ns(&self, path: &str) -> TmResult<i64> {
        match self {
            TimeSpec::Ns(v) => Ok(*v),
            TimeSpec::Iso(s) => parse_iso(s).ok_or_else(|| {
                TmError::param(
                    path,
                    format!(
                        "{path} must be an ISO 8601 date-time such as \"2025-01-06T08:00:00Z\" or an integer of nanoseconds; got \"{s}\""
                    ),
                )
            }),
        }
    }
}

/// The unit of every duration and mean time in a spec.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum TimeUnit {
    /// Seconds.
    Second,
    /// Minutes (the default).
    #[default]
    Minute,
    /// Hours.
    Hour,
    /// Days of 24 hours.
    Day,
}

impl TimeUnit {
    /// Nanoseconds in one unit.
    pub fn ns(self) -> f64 {
        match self {
            TimeUnit::Second => 1e9,
            TimeUnit::Minute => 60e9,
            TimeUnit::Hour => 3600e9,
            TimeUnit::Day => 86_400e9,
        }
    }
}

/// A probability distribution of a number, tagged by `"dist"`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "dist", rename_all = "lowercase", deny_unknown_fields)]
pub enum Dist {
    /// Always `value`.
    Constant {
        /// The value.
        value: f64,
    },
    /// Uniform on `[low, high)`.
    Uniform {
        /// Lower bound.
        low: f64,
        /// Upper bound.
        high: f64,
    },
    /// Normal with mean `mean` and standard deviation `sd`.
    Normal {
        /// Mean.
        mean: f64,
        /// Standard deviation (>= 0).
        sd: f64,
    },
    /// Log-normal given by the mean and standard deviation of the variable itself (not of its
    /// logarithm): `sigma² = ln(1 + sd²/mean²)`, `mu = ln(mean) − sigma²/2`.
    Lognormal {
        /// Mean (> 0).
        mean: f64,
        /// Standard deviation (>= 0).
        sd: f64,
    },
    /// Exponential with mean `mean`.
    Exponential {
        /// Mean (> 0).
        mean: f64,
    },
    /// Triangular on `[low, high]` with mode `mode`.
    Triangular {
        /// Lower bound.
        low: f64,
        /// Most likely value.
        mode: f64,
        /// Upper bound.
        high: f64,
    },
}

/// How cases arrive: a Poisson process whose rate may follow a weekly and a daily pattern.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Arrival {
    /// Mean time between arrivals (in the spec's time unit) where the pattern weights are 1.
    pub mean: f64,
    /// Optional rate weights for Monday..Sunday (7 numbers >= 0, UTC days).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub weekly: Option<Vec<f64>>,
    /// Optional rate weights for the hours 0..23 of a day (24 numbers >= 0, UTC).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub daily: Option<Vec<f64>>,
}

/// A hidden group of cases that behave alike (the ground truth of a clustering).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Segment {
    /// Name of the segment.
    pub name: String,
    /// Share of cases in it; the shares of all segments sum to 1.
    pub p: f64,
}

/// A case attribute drawn once per case, tagged by `"type"`. `by_segment` replaces the
/// distribution for cases of the named segments.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "type", rename_all = "lowercase", deny_unknown_fields)]
pub enum CaseAttribute {
    /// One of `values`, drawn with `weights` (normalised).
    Categorical {
        /// Attribute name.
        name: String,
        /// The possible values.
        values: Vec<String>,
        /// One weight >= 0 per value.
        weights: Vec<f64>,
        /// Weights per segment name.
        #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
        by_segment: BTreeMap<String, Vec<f64>>,
    },
    /// A number from a distribution.
    Numeric {
        /// Attribute name.
        name: String,
        /// The distribution.
        dist: Dist,
        /// Distribution per segment name.
        #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
        by_segment: BTreeMap<String, Dist>,
        /// Round to an integer and store as an integer column.
        #[serde(default, skip_serializing_if = "is_false")]
        integer: bool,
    },
    /// `true` with probability `p`.
    Bool {
        /// Attribute name.
        name: String,
        /// Probability of `true`.
        p: f64,
        /// Probability per segment name.
        #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
        by_segment: BTreeMap<String, f64>,
    },
}

impl CaseAttribute {
    /// The attribute name.
    pub fn name(&self) -> &str {
        match self {
            CaseAttribute::Categorical { name, .. }
            | CaseAttribute::Numeric { name, .. }
            | CaseAttribute::Bool { name, .. } => name,
        }
    }
}

/// Weekly working hours of a resource pool (UTC): open on `days` from `from` to `to` o'clock.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Hours {
    /// Days open: any of "mon", "tue", "wed", "thu", "fri", "sat", "sun".
    pub days: Vec<String>,
    /// Opening hour (0..24, fractions allowed).
    pub from: f64,
    /// Closing hour (greater than `from`, at most 24).
    pub to: f64,
}

/// A pool of interchangeable resources (e.g. 3 mechanics). A case waits in a first-in,
/// first-out queue while all `capacity` members are busy.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Resource {
    /// Pool name; members are named `"{name}-1"`, `"{name}-2"`, ...
    pub name: String,
    /// Number of members working in parallel (>= 1).
    pub capacity: u32,
    /// Working hours: work starts only while open and pauses while closed.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub hours: Option<Hours>,
}

/// An activity: its service time, its resource pool and which events it writes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Activity {
    /// Activity name (the event label).
    pub name: String,
    /// Service time (negative draws count as 0).
    pub duration: Dist,
    /// Service time per segment name.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub by_segment: BTreeMap<String, Dist>,
    /// Resource pool; without one the activity needs nobody and never waits.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub resource: Option<String>,
    /// Write a "start" event besides the "complete" event.
    #[serde(default, skip_serializing_if = "is_false")]
    pub lifecycle: bool,
}

/// A condition on the case (segment and attributes). All the clauses given must hold.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Condition {
    /// The case is in one of these segments.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub segment: Option<Vec<String>>,
    /// The case attribute tested by `in`, `gt`, `ge`, `lt`, `le` or `is`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub attr: Option<String>,
    /// A categorical attribute has one of these values.
    #[serde(default, rename = "in", skip_serializing_if = "Option::is_none")]
    pub in_: Option<Vec<String>>,
    /// A numeric attribute is greater than this.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gt: Option<f64>,
    /// A numeric attribute is greater than or equal to this.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ge: Option<f64>,
    /// A numeric attribute is less than this.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lt: Option<f64>,
    /// A numeric attribute is less than or equal to this.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub le: Option<f64>,
    /// A boolean attribute has this value.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub is: Option<bool>,
    /// All of these conditions hold.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub all: Option<Vec<Condition>>,
    /// At least one of these conditions holds.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub any: Option<Vec<Condition>>,
    /// This condition does not hold.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub not: Option<Box<Condition>>,
}

/// A probability that applies when a condition holds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AttrRule {
    /// The condition.
    #[serde(rename = "if")]
    pub if_: Condition,
    /// The probability used when it holds.
    pub p: f64,
}

/// One branch of an exclusive choice.
///
/// Its probability for a case is the `p` of the first `by_attribute` rule whose condition
/// holds, else `by_segment[segment]`, else `p`; 0 if `when` is given and does not hold; after
/// the drift, `drift.choice_overrides[label]` if given. If the probabilities of a choice sum to
/// less than 1 the rest is the chance that no branch is taken; above 1 they are scaled to 1.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Branch {
    /// A name unique in the spec, used by `drift.choice_overrides`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub label: Option<String>,
    /// Base probability in [0, 1].
    pub p: f64,
    /// Probability per segment name.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub by_segment: BTreeMap<String, f64>,
    /// Probabilities under conditions on the case attributes (first match wins).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub by_attribute: Vec<AttrRule>,
    /// The branch is only possible when this holds.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub when: Option<Condition>,
    /// What the branch does; `null` (or absent) means nothing.
    #[serde(default)]
    pub then: Option<Node>,
}

/// A loop: `body`, then with probability `p_repeat` `redo` and `body` again, at most `max`
/// extra times.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LoopSpec {
    /// Done at least once.
    pub body: Node,
    /// Done before each repetition of the body (e.g. a rework step); may be `null`.
    #[serde(default)]
    pub redo: Option<Node>,
    /// Probability of one more round, in [0, 1].
    pub p_repeat: f64,
    /// `p_repeat` per segment name.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub by_segment: BTreeMap<String, f64>,
    /// Most extra rounds.
    pub max: u32,
}

/// A node of the flow tree. In JSON a one-key object: `{"step": "Inspect"}`,
/// `{"sequence": [...]}`, `{"choice": [...]}`, `{"parallel": [...]}`, `{"loop": {...}}`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Node {
    /// One activity.
    Step(String),
    /// Children one after the other.
    Sequence(Vec<Node>),
    /// Exactly one branch (or none, see [`Branch`]).
    Choice(Vec<Branch>),
    /// All children concurrently; what follows waits for all of them.
    Parallel(Vec<Node>),
    /// A loop.
    Loop(Box<LoopSpec>),
}

/// A planted deviation, tagged by `"kind"`. A case gets at most one deviation; `rate` is the
/// share of cases drawn for it (rates sum to at most 1). A case drawn for a deviation that does
/// not apply to its plan (the step is absent) stays conforming and is recorded as such.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "lowercase", deny_unknown_fields)]
pub enum Deviation {
    /// Every occurrence of `step` is left out.
    Skip {
        /// The activity skipped.
        step: String,
        /// Share of cases.
        rate: f64,
        /// Name in the ground truth (default "skip {step}").
        #[serde(default, skip_serializing_if = "Option::is_none")]
        name: Option<String>,
    },
    /// Where `first` is directly followed by `second` in the flow, they trade places.
    Swap {
        /// The activity normally first.
        first: String,
        /// The activity normally second.
        second: String,
        /// Share of cases.
        rate: f64,
        /// Name in the ground truth (default "swap {first}/{second}").
        #[serde(default, skip_serializing_if = "Option::is_none")]
        name: Option<String>,
    },
    /// The first occurrence of `step` is done twice in a row.
    Repeat {
        /// The activity repeated.
        step: String,
        /// Share of cases.
        rate: f64,
        /// Name in the ground truth (default "repeat {step}").
        #[serde(default, skip_serializing_if = "Option::is_none")]
        name: Option<String>,
    },
}

/// A step inserted by the drift.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct AddStep {
    /// The new activity comes right after the first occurrence of this one.
    pub after: String,
    /// The activity inserted (declared in `activities`).
    pub step: String,
}

/// A sudden change of behaviour for cases arriving at or after a point in time.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Drift {
    /// The change time. Give this or `at_fraction`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at: Option<TimeSpec>,
    /// The change happens at the arrival of case `floor(at_fraction * n_cases)`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at_fraction: Option<f64>,
    /// New probability of branches by label.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub choice_overrides: BTreeMap<String, f64>,
    /// New service-time distribution by activity (for all segments).
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub duration_overrides: BTreeMap<String, Dist>,
    /// Factor on service times by activity.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub duration_factors: BTreeMap<String, f64>,
    /// Steps inserted.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub add_step_after: Vec<AddStep>,
    /// Activities no longer done.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub remove_steps: Vec<String>,
}

/// A numeric event attribute written on "complete" events (null elsewhere).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EventAttribute {
    /// Attribute name.
    pub name: String,
    /// Distribution for activities not in `by_activity`; absent means null for them.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub dist: Option<Dist>,
    /// Distribution per activity name.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub by_activity: BTreeMap<String, Dist>,
}

/// A complete process description. See the module documentation of [`super`] for the JSON
/// reference and an example.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ProcessSpec {
    /// A name for the process.
    #[serde(default, skip_serializing_if = "String::is_empty")]
    pub name: String,
    /// Prefix of the case labels (default "R": "R000001", "R000002", ...).
    #[serde(default = "default_prefix")]
    pub case_prefix: String,
    /// Unit of all durations and mean times (default minutes).
    #[serde(default)]
    pub time_unit: TimeUnit,
    /// When the simulation starts.
    pub start: TimeSpec,
    /// The arrival process.
    pub arrival: Arrival,
    /// Hidden segments; none means one segment called "all".
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub segments: Vec<Segment>,
    /// Case attributes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub case_attributes: Vec<CaseAttribute>,
    /// Resource pools.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub resources: Vec<Resource>,
    /// Activities.
    pub activities: Vec<Activity>,
    /// The control flow.
    pub flow: Node,
    /// Planted deviations.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub deviations: Vec<Deviation>,
    /// A planted change of behaviour.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub drift: Option<Drift>,
    /// Numeric event attributes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub event_attributes: Vec<EventAttribute>,
}

fn default_prefix() -> String {
    "R".to_string()
}

fn is_false(b: &bool) -> bool {
    !*b
}

impl ProcessSpec {
    /// Read and check a spec from JSON text. Errors name the JSON path of the bad element:
    /// [`TmError::Schema`] for a wrong structure (missing key, wrong type, unknown key) and
    /// [`TmError::Parameter`] for a value out of range or a name that does not resolve.
    pub fn from_json(text: &str) -> TmResult<ProcessSpec> {
        let spec: ProcessSpec = serde_json::from_str(text).map_err(|e| serde_error(text, &e))?;
        spec.validate()?;
        Ok(spec)
    }

    /// The spec as pretty-printed JSON (re-readable by [`ProcessSpec::from_json`]).
    pub fn to_json(&self) -> TmResult<String> {
        serde_json::to_string_pretty(self).map_err(|e| TmError::Internal {
            message: format!("could not write the process spec as JSON: {e}"),
        })
    }

    /// Check names, ranges and references; the error names the JSON path at fault.
    pub fn validate(&self) -> TmResult<()> {
        super::compile::Model::compile(self).map(|_| ())
    }
}

/// A serde error turned into a schema error naming the JSON path and line.
fn serde_error(text: &str, e: &serde_json::Error) -> TmError {
    let line = e.line();
    let col = e.column();
    let offset = line_col_offset(text, line, col);
    let msg = e.to_string();
    // serde reports a missing key at the end of the object that lacks it.
    let path = json_path_at(text, offset, msg.starts_with("missing field"));
    let shown = if path.is_empty() { "the spec" } else { &path };
    let inner = msg.split(" at line ").next().unwrap_or(&msg);
    TmError::Schema {
        column: Some(if path.is_empty() {
            "$".into()
        } else {
            path.clone()
        }),
        row: Some(line as u64),
        message: format!("process spec, {shown} (line {line}, column {col}): {inner}"),
    }
}

/// Byte offset of a 1-based line and column (serde_json's convention).
fn line_col_offset(text: &str, line: usize, col: usize) -> usize {
    let mut off = 0usize;
    for (i, l) in text.split_inclusive('\n').enumerate() {
        if i + 1 == line {
            return (off + col).min(text.len());
        }
        off += l.len();
    }
    text.len()
}

enum Frame {
    Obj { key: Option<String>, want_key: bool },
    Arr { index: usize, seen_value: bool },
}

/// The JSON path (`a.b[2].c`) of the innermost element open at byte `offset`. With
/// `object_only`, the last key of the innermost object is dropped (the object itself is meant).
fn json_path_at(text: &str, offset: usize, object_only: bool) -> String {
    let bytes = text.as_bytes();
    let end = offset.min(bytes.len());
    let mut stack: Vec<Frame> = Vec::new();
    let mut i = 0;
    while i < end {
        match bytes[i] {
            b'"' => {
                let start = i + 1;
                i += 1;
                while i < bytes.len() && bytes[i] != b'"' {
                    if bytes[i] == b'\\' {
                        i += 1;
                    }
                    i += 1;
                }
                let s = text.get(start..i.min(bytes.len())).unwrap_or("");
                match stack.last_mut() {
                    Some(Frame::Obj { key, want_key }) if *want_key => {
                        *key = Some(s.to_string());
                        *want_key = false;
                    }
                    Some(Frame::Arr { seen_value, .. }) => *seen_value = true,
                    _ => {}
                }
            }
            b'{' => {
                if let Some(Frame::Arr { seen_value, .. }) = stack.last_mut() {
                    *seen_value = true;
                }
                stack.push(Frame::Obj {
                    key: None,
                    want_key: true,
                })
            }
            b'[' => {
                if let Some(Frame::Arr { seen_value, .. }) = stack.last_mut() {
                    *seen_value = true;
                }
                stack.push(Frame::Arr {
                    index: 0,
                    seen_value: false,
                })
            }
            b'}' | b']' => {
                stack.pop();
            }
            b',' => match stack.last_mut() {
                Some(Frame::Obj { key, want_key }) => {
                    *key = None;
                    *want_key = true;
                }
                Some(Frame::Arr { index, .. }) => *index += 1,
                None => {}
            },
            _ => {}
        }
        i += 1;
    }
    if object_only {
        if let Some(Frame::Obj { key, .. }) = stack.last_mut() {
            *key = None;
        }
    }
    let mut path = String::new();
    for f in &stack {
        match f {
            Frame::Obj { key: Some(k), .. } => {
                if !path.is_empty() {
                    path.push('.');
                }
                path.push_str(k);
            }
            Frame::Obj { key: None, .. } => {}
            Frame::Arr { index, .. } => path.push_str(&format!("[{index}]")),
        }
    }
    path
}

/// Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant's `days_from_civil`).
pub(crate) fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

fn digits(s: &str) -> Option<i64> {
    if s.is_empty() || !s.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    s.parse().ok()
}

/// Parse `YYYY-MM-DD[(T| )HH:MM[:SS[.fraction]]][Z|±HH:MM|±HHMM]` to ns since the epoch (UTC).
pub(crate) fn parse_iso(s: &str) -> Option<i64> {
    let s = s.trim();
    let (date, rest) = if s.len() > 10 {
        (s.get(..10)?, s.get(10..)?)
    } else {
        (s, "")
    };
    let mut dp = date.split('-');
    let y = digits(dp.next()?)?;
    let m = digits(dp.next()?)?;
    let d = digits(dp.next()?)?;
    if dp.next().is_some() || !(1..=12).contains(&m) || d < 1 {
        return None;
    }
    let leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    let mdays = [
        31,
        if leap { 29 } else { 28 },
        31,
        30,
        31,
        30,
        31,
        31,
        30,
        31,
        30,
        31,
    ];
    if d > mdays[(m - 1) as usize] {
        return None;
    }
    let mut secs = days_from_civil(y, m, d) * 86_400;
    let mut nanos = 0i64;
    if !rest.is_empty() {
        let rest = rest.strip_prefix('T').or_else(|| rest.strip_prefix(' '))?;
        // Split off the offset.
        let (clock, offset) = match rest.find(['Z', 'z', '+', '-']) {
            Some(p) => (&rest[..p], &rest[p..]),
            None => (rest, ""),
        };
        let mut cp = clock.splitn(3, ':');
        let hh = digits(cp.next()?)?;
        let mm = digits(cp.next()?)?;
        let (ss, frac) = match cp.next() {
            None => (0, ""),
            Some(x) => match x.split_once(['.', ',']) {
                Some((a, f)) => (digits(a)?, f),
                None => (digits(x)?, ""),
            },
        };
        if hh > 24 || mm > 59 || ss > 60 || (hh == 24 && (mm > 0 || ss > 0)) {
            return None;
        }
        if !frac.is_empty() {
            if frac.len() > 9 || !frac.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            nanos = digits(frac)? * 10i64.pow(9 - frac.len() as u32);
        }
        secs += hh * 3600 + mm * 60 + ss;
        if !offset.is_empty() && offset != "Z" && offset != "z" {
            let sign = if offset.starts_with('-') { -1 } else { 1 };
            let o = offset[1..].replace(':', "");
            if o.len() != 4 {
                return None;
            }
            let oh = digits(o.get(..2)?)?;
            let om = digits(o.get(2..)?)?;
            if oh > 23 || om > 59 {
                return None;
            }
            secs -= sign * (oh * 3600 + om * 60);
        }
    }
    secs.checked_mul(1_000_000_000)?.checked_add(nanos)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iso_dates_parse() {
        // Day counts since 1970-01-01 computed with Python's datetime module [calc]:
        // (date(2025, 1, 6) - date(1970, 1, 1)).days == 20094 (a Monday), 2000-02-29 -> 11016.
        assert_eq!(
            parse_iso("2025-01-06"),
            Some(20_094 * 86_400 * 1_000_000_000)
        );
        assert_eq!(parse_iso("1970-01-01T00:00:01Z"), Some(1_000_000_000));
        assert_eq!(parse_iso("1970-01-01T01:00:00+01:00"), Some(0));
        assert_eq!(parse_iso("1970-01-01 00:00:00.25"), Some(250_000_000));
        assert_eq!(
            parse_iso("2000-02-29"),
            Some(11_016 * 86_400 * 1_000_000_000)
        );
        assert_eq!(parse_iso("2001-02-29"), None);
        assert_eq!(parse_iso("2025-13-01"), None);
        assert_eq!(parse_iso("yesterday"), None);
        assert_eq!(parse_iso("2025-01-06T25:00"), None);
        assert_eq!(parse_iso("2025-01-06T08:00+1\u{e9}1"), None);
        assert_eq!(parse_iso("2025-01-0\u{e9}"), None);
    }

    #[test]
    fn path_scanner_finds_nested_elements() {
        let t = r#"{"flow": {"sequence": [{"step": "a"}, {"choice": [{"p": 1}, {"p": 2"#;
        assert_eq!(
            json_path_at(t, t.len(), false),
            "flow.sequence[1].choice[1].p"
        );
        let t = r#"{"a": [1, 2, {"b": "x", "c": "#;
        assert_eq!(json_path_at(t, t.len(), false), "a[2].c");
        assert_eq!(json_path_at(t, t.len(), true), "a[2]");
    }

    #[test]
    fn structural_errors_name_the_path() {
        let text = r#"{
  "start": "2025-01-06",
  "arrival": {"mean": 10},
  "activities": [{"name": "a", "duration": {"dist": "constant", "value": 1}}],
  "flow": {"sequence": [{"step": "a"}, {"choice": [{"p": 0.5, "then": {"step": "a"}}, {"then": null}]}]}
}"#;
        let err = ProcessSpec::from_json(text).unwrap_err();
        let msg = err.to_string();
        assert!(matches!(err, TmError::Schema { .. }), "{err:?}");
        assert!(msg.contains("flow.sequence[1].choice[1]"), "{msg}");
        assert!(msg.contains("missing field `p`"), "{msg}");

        let text = text.replace(r#""dist": "constant""#, r#""dist": "gamma""#);
        let msg = ProcessSpec::from_json(&text).unwrap_err().to_string();
        assert!(msg.contains("activities[0]"), "{msg}");
        assert!(msg.contains("gamma"), "{msg}");

        let msg = ProcessSpec::from_json(r#"{"start": "2025-01-06", "arival": {}}"#)
            .unwrap_err()
            .to_string();
        assert!(msg.contains("arival"), "{msg}");
    }
}
