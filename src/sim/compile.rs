//! The checked, index-based form of a [`ProcessSpec`] used by the engine.
//!
//! Compiling resolves every name (activities, pools, segments, attributes, labels) to an index,
//! builds the samplers of the distributions, and checks ranges. Each error names the JSON path
//! of the element at fault (`flow.sequence[2].choice[1].p must be in [0, 1] ...`).

use std::collections::{BTreeMap, HashMap, HashSet};

use rand::Rng;
use rand_distr::{Distribution, Exp, LogNormal, Normal, Triangular, Uniform};

use super::spec::{Activity, CaseAttribute, Condition, Deviation, Dist, Hours, Node, ProcessSpec};
use crate::error::{TmError, TmResult};

pub(crate) const HOUR_NS: i64 = 3_600_000_000_000;
pub(crate) const DAY_NS: i64 = 24 * HOUR_NS;
pub(crate) const WEEK_NS: i64 = 7 * DAY_NS;
/// 1970-01-05 (the first Monday after the epoch) in ns: the origin of weekly patterns.
pub(crate) const MONDAY_NS: i64 = 4 * DAY_NS;

fn perr(path: &str, message: String) -> TmError {
    TmError::param(path, message)
}

/// Latest time the calendar arithmetic handles without overflow.
const TIME_MAX: i64 = i64::MAX - 4 * WEEK_NS;

/// A ready-to-draw distribution.
#[derive(Debug, Clone)]
pub(crate) enum Sampler {
    Const(f64),
    Uniform(Uniform<f64>),
    Normal(Normal<f64>),
    LogNormal(LogNormal<f64>),
    Exp(Exp<f64>),
    Tri(Triangular<f64>),
}

impl Sampler {
    #[inline]
    pub(crate) fn sample<R: Rng + ?Sized>(&self, rng: &mut R) -> f64 {
        match self {
            Sampler::Const(v) => *v,
            Sampler::Uniform(d) => d.sample(rng),
            Sampler::Normal(d) => d.sample(rng),
            Sampler::LogNormal(d) => d.sample(rng),
            Sampler::Exp(d) => d.sample(rng),
            Sampler::Tri(d) => d.sample(rng),
        }
    }

    /// Build and check a sampler. `nonneg`: the variable is a time and must not be negative
    /// where the distribution is bounded (a normal is allowed; negative draws count as 0).
    pub(crate) fn new(d: &Dist, path: &str, nonneg: bool) -> TmResult<Sampler> {
        let finite = |name: &str, v: f64| -> TmResult<()> {
            if v.is_finite() {
                Ok(())
            } else {
                Err(perr(
                    &format!("{path}.{name}"),
                    format!("{path}.{name} must be a finite number, got {v}"),
                ))
            }
        };
        let at_least0 = |name: &str, v: f64, what: &str| -> TmResult<()> {
            if v >= 0.0 {
                Ok(())
            } else {
                Err(perr(
                    &format!("{path}.{name}"),
                    format!("{path}.{name} must be >= 0 ({what}), got {v}"),
                ))
            }
        };
        let time = "a duration cannot be negative";
        let bad = |m: String| perr(path, format!("{path}: {m}"));
        Ok(match *d {
            Dist::Constant { value } => {
                finite("value", value)?;
                if nonneg {
                    at_least0("value", value, time)?;
                }
                Sampler::Const(value)
            }
            Dist::Uniform { low, high } => {
                finite("low", low)?;
                finite("high", high)?;
                if nonneg {
                    at_least0("low", low, time)?;
                }
                if low > high {
                    return Err(bad(format!("low ({low}) must not exceed high ({high})")));
                }
                if low == high {
                    Sampler::Const(low)
                } else {
                    Sampler::Uniform(
                        Uniform::new(low, high).map_err(|e| bad(format!("uniform: {e}")))?,
                    )
                }
            }
            Dist::Normal { mean, sd } => {
                finite("mean", mean)?;
                finite("sd", sd)?;
                at_least0("sd", sd, "a standard deviation")?;
                Sampler::Normal(Normal::new(mean, sd).map_err(|e| bad(format!("normal: {e}")))?)
            }
            Dist::Lognormal { mean, sd } => {
                finite("mean", mean)?;
                finite("sd", sd)?;
                if mean <= 0.0 {
                    return Err(perr(
                        &format!("{path}.mean"),
                        format!("{path}.mean must be > 0 for a lognormal, got {mean}"),
                    ));
                }
                at_least0("sd", sd, "a standard deviation")?;
                let s2 = (1.0 + (sd / mean).powi(2)).ln();
                let mu = mean.ln() - s2 / 2.0;
                Sampler::LogNormal(
                    LogNormal::new(mu, s2.sqrt()).map_err(|e| bad(format!("lognormal: {e}")))?,
                )
            }
            Dist::Exponential { mean } => {
                finite("mean", mean)?;
                if mean <= 0.0 {
                    return Err(perr(
                        &format!("{path}.mean"),
                        format!("{path}.mean must be > 0 for an exponential, got {mean}"),
                    ));
                }
                Sampler::Exp(Exp::new(1.0 / mean).map_err(|e| bad(format!("exponential: {e}")))?)
            }
            Dist::Triangular { low, mode, high } => {
                finite("low", low)?;
                finite("mode", mode)?;
                finite("high", high)?;
                if nonneg {
                    at_least0("low", low, time)?;
                }
                if !(low <= mode && mode <= high) {
                    return Err(bad(format!(
                        "a triangular needs low <= mode <= high, got {low}, {mode}, {high}"
                    )));
                }
                if low == high {
                    Sampler::Const(low)
                } else {
                    Sampler::Tri(
                        Triangular::new(low, high, mode)
                            .map_err(|e| bad(format!("triangular: {e}")))?,
                    )
                }
            }
        })
    }
}

/// Weekly opening intervals `[from, to)` in ns after Monday 00:00 UTC, sorted, disjoint.
#[derive(Debug, Clone)]
pub(crate) struct Calendar {
    intervals: Vec<(i64, i64)>,
}

impl Calendar {
    fn new(h: &Hours, path: &str) -> TmResult<Calendar> {
        const DAYS: [&str; 7] = ["mon", "tue", "wed", "thu", "fri", "sat", "sun"];
        if !(h.from.is_finite()
            && h.to.is_finite()
            && 0.0 <= h.from
            && h.from < h.to
            && h.to <= 24.0)
        {
            return Err(perr(
                path,
                format!(
                    "{path}: opening hours need 0 <= from < to <= 24, got from {} to {}",
                    h.from, h.to
                ),
            ));
        }
        if h.days.is_empty() {
            return Err(perr(
                &format!("{path}.days"),
                format!("{path}.days must name at least one day (\"mon\" .. \"sun\")"),
            ));
        }
        let mut open = [false; 7];
        for (i, d) in h.days.iter().enumerate() {
            let k = DAYS
                .iter()
                .position(|x| x.eq_ignore_ascii_case(d.trim()))
                .ok_or_else(|| {
                    perr(
                        &format!("{path}.days[{i}]"),
                        format!(
                            "{path}.days[{i}] must be one of mon, tue, wed, thu, fri, sat, sun; got \"{d}\""
                        ),
                    )
                })?;
            open[k] = true;
        }
        let from = (h.from * HOUR_NS as f64).round() as i64;
        let to = (h.to * HOUR_NS as f64).round() as i64;
        let mut intervals: Vec<(i64, i64)> = Vec::new();
        for (k, _) in open.iter().enumerate().filter(|(_, &o)| o) {
            let a = k as i64 * DAY_NS + from;
            let b = k as i64 * DAY_NS + to;
            match intervals.last_mut() {
                Some(last) if last.1 == a => last.1 = b,
                _ => intervals.push((a, b)),
            }
        }
        // Sunday 24:00 touching Monday 00:00 is the same instant across the week boundary;
        // keeping two intervals is harmless.
        Ok(Calendar { intervals })
    }

    /// The first instant at or after `t` when the pool is open (`i64::MAX` near the end of
    /// representable time).
    pub(crate) fn next_open(&self, t: i64) -> i64 {
        if t > TIME_MAX {
            return i64::MAX;
        }
        let rel = t - MONDAY_NS;
        let week = rel.div_euclid(WEEK_NS);
        let off = rel.rem_euclid(WEEK_NS);
        let base = MONDAY_NS + week * WEEK_NS;
        for &(a, b) in &self.intervals {
            if b > off {
                return base + a.max(off);
            }
        }
        base + WEEK_NS + self.intervals[0].0
    }

    /// When work of `dur` ns started at `t` ends, pausing while the pool is closed.
    pub(crate) fn finish(&self, t: i64, dur: i64) -> i64 {
        let mut t = self.next_open(t);
        let mut left = dur;
        loop {
            if t > TIME_MAX {
                return i64::MAX;
            }
            let rel = t - MONDAY_NS;
            let off = rel.rem_euclid(WEEK_NS);
            let base = t - off;
            // `t` is open, so some interval contains `off`.
            let end = self
                .intervals
                .iter()
                .find(|&&(a, b)| a <= off && off < b)
                .map_or(t, |&(_, b)| base + b);
            if t.saturating_add(left) <= end {
                return t.saturating_add(left);
            }
            left -= end - t;
            t = self.next_open(end);
        }
    }
}

/// The arrival process: a unit-rate Poisson process mapped through the inverse of the
/// cumulative rate (time-change method).
#[derive(Debug, Clone)]
pub(crate) struct ArrivalModel {
    pub mean_ns: f64,
    /// Expected arrivals before hour `h` of the week (169 entries), when a pattern is given.
    pub week_cum: Option<Vec<f64>>,
}

impl ArrivalModel {
    /// Cumulative expected arrivals from Monday 1970-01-05 to `t`.
    pub(crate) fn cum_at(&self, t: i64) -> f64 {
        match &self.week_cum {
            None => (t - MONDAY_NS) as f64 / self.mean_ns,
            Some(c) => {
                let rel = t - MONDAY_NS;
                let week = rel.div_euclid(WEEK_NS);
                let off = rel.rem_euclid(WEEK_NS);
                let h = (off / HOUR_NS) as usize;
                let frac = (off - h as i64 * HOUR_NS) as f64 / HOUR_NS as f64;
                week as f64 * c[168] + c[h] + frac * (c[h + 1] - c[h])
            }
        }
    }

    /// The time at which the cumulative expected arrivals reach `s` (inverse of `cum_at`).
    pub(crate) fn time_at(&self, s: f64) -> Option<i64> {
        let t = match &self.week_cum {
            None => MONDAY_NS as f64 + s * self.mean_ns,
            Some(c) => {
                let w = c[168];
                let mut week = (s / w).floor();
                let mut r = s - week * w;
                // First hour whose end lies beyond r (skips hours with no arrivals).
                let mut h = c[1..].partition_point(|&x| x <= r);
                if h >= 168 {
                    // Rounding put r at the very end of the week: start of the next one.
                    week += 1.0;
                    r = 0.0;
                    h = c[1..].partition_point(|&x| x <= r).min(167);
                }
                let span = c[h + 1] - c[h];
                let frac = if span > 0.0 {
                    ((r - c[h]) / span).clamp(0.0, 1.0)
                } else {
                    0.0
                };
                let wk = week * WEEK_NS as f64;
                if !wk.is_finite() || wk.abs() > 9.0e18 {
                    return None;
                }
                return (MONDAY_NS + week as i64 * WEEK_NS)
                    .checked_add(h as i64 * HOUR_NS + (frac * HOUR_NS as f64) as i64);
            }
        };
        if t.is_finite() && t.abs() < 9.2e18 {
            Some(t as i64)
        } else {
            None
        }
    }
}

#[derive(Debug, Clone)]
pub(crate) enum Cond {
    Segment(Vec<bool>),
    CatIn(usize, Vec<bool>),
    Range(usize, f64, bool, f64, bool),
    Is(usize, bool),
    All(Vec<Cond>),
    Any(Vec<Cond>),
    Not(Box<Cond>),
}

impl Cond {
    #[inline]
    pub(crate) fn holds(&self, seg: u32, vals: &[f64]) -> bool {
        match self {
            Cond::Segment(m) => m[seg as usize],
            Cond::CatIn(a, m) => m.get(vals[*a] as usize).copied().unwrap_or(false),
            Cond::Range(a, lo, lo_incl, hi, hi_incl) => {
                let v = vals[*a];
                (if *lo_incl { v >= *lo } else { v > *lo })
                    && (if *hi_incl { v <= *hi } else { v < *hi })
            }
            Cond::Is(a, b) => (vals[*a] != 0.0) == *b,
            Cond::All(c) => c.iter().all(|c| c.holds(seg, vals)),
            Cond::Any(c) => c.iter().any(|c| c.holds(seg, vals)),
            Cond::Not(c) => !c.holds(seg, vals),
        }
    }
}

#[derive(Debug, Clone)]
pub(crate) struct BranchModel {
    pub base: f64,
    pub by_seg: Vec<Option<f64>>,
    pub by_attr: Vec<(Cond, f64)>,
    pub when: Option<Cond>,
    pub drift_p: Option<f64>,
    pub then: Option<NodeModel>,
}

impl BranchModel {
    #[inline]
    pub(crate) fn weight(&self, seg: u32, vals: &[f64], after: bool) -> f64 {
        if let Some(w) = &self.when {
            if !w.holds(seg, vals) {
                return 0.0;
            }
        }
        if after {
            if let Some(p) = self.drift_p {
                return p;
            }
        }
        for (c, p) in &self.by_attr {
            if c.holds(seg, vals) {
                return *p;
            }
        }
        self.by_seg[seg as usize].unwrap_or(self.base)
    }
}

#[derive(Debug, Clone)]
pub(crate) enum NodeModel {
    Step(u32),
    Seq(Vec<NodeModel>),
    Choice(Vec<BranchModel>),
    Par(Vec<NodeModel>),
    Loop {
        body: Box<NodeModel>,
        redo: Option<Box<NodeModel>>,
        p: Vec<f64>,
        max: u32,
    },
}

#[derive(Debug, Clone)]
pub(crate) enum AttrModel {
    Cat {
        name: String,
        values: Vec<String>,
        /// Cumulative normalised weights per segment.
        cum: Vec<Vec<f64>>,
    },
    Num {
        name: String,
        per_seg: Vec<Sampler>,
        integer: bool,
    },
    Bool {
        name: String,
        p: Vec<f64>,
    },
}

#[derive(Debug, Clone)]
pub(crate) struct ActModel {
    pub name: String,
    pub dur: Vec<Sampler>,
    pub pool: Option<u32>,
    pub lifecycle: bool,
    pub drift_dur: Option<Sampler>,
    pub drift_factor: f64,
}

#[derive(Debug, Clone)]
pub(crate) struct PoolModel {
    pub name: String,
    pub capacity: u32,
    pub calendar: Option<Calendar>,
}

#[derive(Debug, Clone, Copy)]
pub(crate) enum DevKind {
    Skip(u32),
    Swap(u32, u32),
    Repeat(u32),
}

#[derive(Debug, Clone)]
pub(crate) enum DriftAt {
    Time(i64),
    Fraction(f64),
}

#[derive(Debug, Clone)]
pub(crate) struct DriftModel {
    pub at: DriftAt,
    pub add_after: Vec<(u32, u32)>,
    pub remove: Vec<u32>,
}

#[derive(Debug, Clone)]
pub(crate) struct EvAttrModel {
    pub name: String,
    pub per_act: Vec<Option<Sampler>>,
}

/// The compiled spec.
#[derive(Debug, Clone)]
pub(crate) struct Model {
    pub start: i64,
    pub unit_ns: f64,
    pub case_prefix: String,
    pub arrival: ArrivalModel,
    pub seg_names: Vec<String>,
    pub seg_cum: Vec<f64>,
    pub attrs: Vec<AttrModel>,
    pub pools: Vec<PoolModel>,
    pub acts: Vec<ActModel>,
    pub flow: NodeModel,
    pub dev_names: Vec<String>,
    pub devs: Vec<DevKind>,
    pub dev_cum: Vec<f64>,
    pub drift: Option<DriftModel>,
    pub ev_attrs: Vec<EvAttrModel>,
}

fn prob(path: &str, p: f64) -> TmResult<f64> {
    if (0.0..=1.0).contains(&p) {
        Ok(p)
    } else {
        Err(perr(path, format!("{path} must be in [0, 1], got {p}")))
    }
}

fn unique<'a>(
    path: &str,
    names: impl Iterator<Item = &'a str>,
    what: &str,
) -> TmResult<HashMap<String, u32>> {
    let mut m = HashMap::new();
    for (i, n) in names.enumerate() {
        if n.is_empty() {
            return Err(perr(
                &format!("{path}[{i}].name"),
                format!("{path}[{i}].name: a {what} needs a non-empty name"),
            ));
        }
        if m.insert(n.to_string(), i as u32).is_some() {
            return Err(perr(
                &format!("{path}[{i}].name"),
                format!("{path}[{i}].name: {what} \"{n}\" is declared twice"),
            ));
        }
    }
    Ok(m)
}

fn lookup(
    map: &HashMap<String, u32>,
    name: &str,
    path: &str,
    what: &str,
    all: &[String],
) -> TmResult<u32> {
    map.get(name).copied().ok_or_else(|| {
        perr(
            path,
            format!(
                "{path}: unknown {what} \"{name}\" (declared: {})",
                if all.is_empty() {
                    "none".to_string()
                } else {
                    all.join(", ")
                }
            ),
        )
    })
}

struct Ctx<'a> {
    segs: HashMap<String, u32>,
    seg_names: Vec<String>,
    attr_idx: HashMap<String, u32>,
    attr_names: Vec<String>,
    attrs: &'a [AttrModel],
    acts: HashMap<String, u32>,
    act_names: Vec<String>,
    labels: HashMap<String, String>,
}

impl Ctx<'_> {
    fn per_seg<T: Clone, U>(
        &self,
        path: &str,
        map: &BTreeMap<String, U>,
        base: T,
        mut f: impl FnMut(&U, &str) -> TmResult<T>,
    ) -> TmResult<Vec<T>> {
        let mut out = vec![base; self.seg_names.len()];
        for (k, v) in map {
            let p = format!("{path}.by_segment.{k}");
            let s = lookup(&self.segs, k, &p, "segment", &self.seg_names)?;
            out[s as usize] = f(v, &p)?;
        }
        Ok(out)
    }

    fn cond(&self, c: &Condition, path: &str) -> TmResult<Cond> {
        let mut parts = Vec::new();
        if let Some(segs) = &c.segment {
            let mut m = vec![false; self.seg_names.len()];
            for (i, s) in segs.iter().enumerate() {
                let p = format!("{path}.segment[{i}]");
                m[lookup(&self.segs, s, &p, "segment", &self.seg_names)? as usize] = true;
            }
            parts.push(Cond::Segment(m));
        }
        let tests = c.in_.is_some()
            || c.gt.is_some()
            || c.ge.is_some()
            || c.lt.is_some()
            || c.le.is_some()
            || c.is.is_some();
        match &c.attr {
            None if tests => {
                return Err(perr(
                    path,
                    format!("{path}: \"in\", \"gt\", \"ge\", \"lt\", \"le\" and \"is\" need \"attr\" (the case attribute tested)"),
                ))
            }
            None => {}
            Some(name) => {
                let ap = format!("{path}.attr");
                let a = lookup(&self.attr_idx, name, &ap, "case attribute", &self.attr_names)? as usize;
                if !tests {
                    return Err(perr(
                        path,
                        format!("{path}: attribute \"{name}\" is named but not tested; add \"in\", \"gt\", \"ge\", \"lt\", \"le\" or \"is\""),
                    ));
                }
                let wrong = |key: &str, kind: &str| {
                    perr(
                        &format!("{path}.{key}"),
                        format!("{path}.{key} cannot test attribute \"{name}\", which is {kind}"),
                    )
                };
                match &self.attrs[a] {
                    AttrModel::Cat { values, .. } => {
                        for (k, v) in [("gt", c.gt), ("ge", c.ge), ("lt", c.lt), ("le", c.le)] {
                            if v.is_some() {
                                return Err(wrong(k, "categorical"));
                            }
                        }
                        if c.is.is_some() {
                            return Err(wrong("is", "categorical"));
                        }
                        if let Some(list) = &c.in_ {
                            let mut m = vec![false; values.len()];
                            for (i, v) in list.iter().enumerate() {
                                let k = values.iter().position(|x| x == v).ok_or_else(|| {
                                    perr(
                                        &format!("{path}.in[{i}]"),
                                        format!(
                                            "{path}.in[{i}]: \"{v}\" is not a value of \"{name}\" ({})",
                                            values.join(", ")
                                        ),
                                    )
                                })?;
                                m[k] = true;
                            }
                            parts.push(Cond::CatIn(a, m));
                        }
                    }
                    AttrModel::Num { .. } => {
                        if c.in_.is_some() {
                            return Err(wrong("in", "numeric"));
                        }
                        if c.is.is_some() {
                            return Err(wrong("is", "numeric"));
                        }
                        let (mut lo, mut lo_incl, mut hi, mut hi_incl) =
                            (f64::NEG_INFINITY, false, f64::INFINITY, false);
                        if let Some(v) = c.gt {
                            lo = v;
                        }
                        if let Some(v) = c.ge {
                            if c.gt.is_some() {
                                return Err(perr(path, format!("{path}: give \"gt\" or \"ge\", not both")));
                            }
                            lo = v;
                            lo_incl = true;
                        }
                        if let Some(v) = c.lt {
                            hi = v;
                        }
                        if let Some(v) = c.le {
                            if c.lt.is_some() {
                                return Err(perr(path, format!("{path}: give \"lt\" or \"le\", not both")));
                            }
                            hi = v;
                            hi_incl = true;
                        }
                        if lo.is_nan() || hi.is_nan() {
                            return Err(perr(path, format!("{path}: bounds must be numbers")));
                        }
                        parts.push(Cond::Range(a, lo, lo_incl, hi, hi_incl));
                    }
                    AttrModel::Bool { .. } => {
                        for (k, v) in [("gt", c.gt), ("ge", c.ge), ("lt", c.lt), ("le", c.le)] {
                            if v.is_some() {
                                return Err(wrong(k, "boolean"));
                            }
                        }
                        if c.in_.is_some() {
                            return Err(wrong("in", "boolean"));
                        }
                        if let Some(b) = c.is {
                            parts.push(Cond::Is(a, b));
                        }
                    }
                }
            }
        }
        if let Some(all) = &c.all {
            let v = all
                .iter()
                .enumerate()
                .map(|(i, c)| self.cond(c, &format!("{path}.all[{i}]")))
                .collect::<TmResult<Vec<_>>>()?;
            parts.push(Cond::All(v));
        }
        if let Some(any) = &c.any {
            if any.is_empty() {
                return Err(perr(
                    &format!("{path}.any"),
                    format!("{path}.any must not be empty"),
                ));
            }
            let v = any
                .iter()
                .enumerate()
                .map(|(i, c)| self.cond(c, &format!("{path}.any[{i}]")))
                .collect::<TmResult<Vec<_>>>()?;
            parts.push(Cond::Any(v));
        }
        if let Some(n) = &c.not {
            parts.push(Cond::Not(Box::new(self.cond(n, &format!("{path}.not"))?)));
        }
        if parts.is_empty() {
            return Err(perr(path, format!("{path}: an empty condition; give \"segment\", \"attr\", \"all\", \"any\" or \"not\"")));
        }
        Ok(if parts.len() == 1 {
            parts.pop().unwrap_or(Cond::All(Vec::new()))
        } else {
            Cond::All(parts)
        })
    }

    fn node(&mut self, n: &Node, path: &str) -> TmResult<NodeModel> {
        Ok(match n {
            Node::Step(a) => {
                let p = format!("{path}.step");
                NodeModel::Step(lookup(&self.acts, a, &p, "activity", &self.act_names)?)
            }
            Node::Sequence(v) => NodeModel::Seq(self.nodes(v, &format!("{path}.sequence"))?),
            Node::Parallel(v) => {
                if v.is_empty() {
                    return Err(perr(
                        &format!("{path}.parallel"),
                        format!("{path}.parallel needs at least one branch"),
                    ));
                }
                NodeModel::Par(self.nodes(v, &format!("{path}.parallel"))?)
            }
            Node::Choice(bs) => {
                let cp = format!("{path}.choice");
                if bs.is_empty() {
                    return Err(perr(&cp, format!("{cp} needs at least one branch")));
                }
                let mut out = Vec::with_capacity(bs.len());
                for (i, b) in bs.iter().enumerate() {
                    let bp = format!("{cp}[{i}]");
                    let base = prob(&format!("{bp}.p"), b.p)?;
                    let by_seg =
                        self.per_seg(&bp, &b.by_segment, None, |&v, p| prob(p, v).map(Some))?;
                    let mut by_attr = Vec::with_capacity(b.by_attribute.len());
                    for (k, r) in b.by_attribute.iter().enumerate() {
                        let rp = format!("{bp}.by_attribute[{k}]");
                        let c = self.cond(&r.if_, &format!("{rp}.if"))?;
                        by_attr.push((c, prob(&format!("{rp}.p"), r.p)?));
                    }
                    let when = match &b.when {
                        Some(c) => Some(self.cond(c, &format!("{bp}.when"))?),
                        None => None,
                    };
                    if let Some(l) = &b.label {
                        if let Some(prev) = self.labels.insert(l.clone(), format!("{bp}.label")) {
                            return Err(perr(
                                &format!("{bp}.label"),
                                format!("{bp}.label: label \"{l}\" is already used at {prev}"),
                            ));
                        }
                    }
                    let then = match &b.then {
                        Some(n) => Some(self.node(n, &format!("{bp}.then"))?),
                        None => None,
                    };
                    out.push(BranchModel {
                        base,
                        by_seg,
                        by_attr,
                        when,
                        drift_p: None,
                        then,
                    });
                }
                NodeModel::Choice(out)
            }
            Node::Loop(l) => {
                let lp = format!("{path}.loop");
                let body = self.node(&l.body, &format!("{lp}.body"))?;
                let redo = match &l.redo {
                    Some(r) => Some(Box::new(self.node(r, &format!("{lp}.redo"))?)),
                    None => None,
                };
                let base = prob(&format!("{lp}.p_repeat"), l.p_repeat)?;
                let p = self.per_seg(&lp, &l.by_segment, base, |&v, p| prob(p, v))?;
                if l.max > 1000 {
                    return Err(perr(
                        &format!("{lp}.max"),
                        format!("{lp}.max must be at most 1000, got {}", l.max),
                    ));
                }
                NodeModel::Loop {
                    body: Box::new(body),
                    redo,
                    p,
                    max: l.max,
                }
            }
        })
    }

    fn nodes(&mut self, v: &[Node], path: &str) -> TmResult<Vec<NodeModel>> {
        v.iter()
            .enumerate()
            .map(|(i, n)| self.node(n, &format!("{path}[{i}]")))
            .collect()
    }
}

/// Fewest steps a case can take through `n` (0 if it can finish without any).
fn min_steps(n: &NodeModel) -> usize {
    match n {
        NodeModel::Step(_) => 1,
        NodeModel::Seq(v) | NodeModel::Par(v) => v.iter().map(min_steps).sum(),
        NodeModel::Choice(bs) => {
            // Some case may take no branch when, for a segment, the probabilities (ignoring
            // attribute rules and conditions, which the run-time check covers) sum below 1.
            let n_seg = bs.first().map_or(0, |b| b.by_seg.len());
            let short = (0..n_seg).any(|s| {
                bs.iter()
                    .map(|b| b.by_seg[s].unwrap_or(b.base))
                    .sum::<f64>()
                    < 1.0 - 1e-9
            });
            if short {
                0
            } else {
                bs.iter()
                    .map(|b| b.then.as_ref().map_or(0, min_steps))
                    .min()
                    .unwrap_or(0)
            }
        }
        NodeModel::Loop { body, .. } => min_steps(body),
    }
}

fn set_drift_p(n: &mut NodeModel, labels: &HashMap<String, f64>, spec_flow: &Node) {
    // Walk the compiled tree in the same order as the spec tree to attach overrides by label.
    match (n, spec_flow) {
        (NodeModel::Seq(v), Node::Sequence(s)) | (NodeModel::Par(v), Node::Parallel(s)) => {
            for (a, b) in v.iter_mut().zip(s) {
                set_drift_p(a, labels, b);
            }
        }
        (NodeModel::Choice(bs), Node::Choice(s)) => {
            for (b, sb) in bs.iter_mut().zip(s) {
                if let Some(l) = &sb.label {
                    b.drift_p = labels.get(l).copied();
                }
                if let (Some(t), Some(st)) = (b.then.as_mut(), sb.then.as_ref()) {
                    set_drift_p(t, labels, st);
                }
            }
        }
        (NodeModel::Loop { body, redo, .. }, Node::Loop(l)) => {
            set_drift_p(body, labels, &l.body);
            if let (Some(r), Some(sr)) = (redo.as_mut(), l.redo.as_ref()) {
                set_drift_p(r, labels, sr);
            }
        }
        _ => {}
    }
}

impl Model {
    /// Check and compile a spec.
    pub(crate) fn compile(spec: &ProcessSpec) -> TmResult<Model> {
        let start = spec.start.to_ns("start")?;
        let unit_ns = spec.time_unit.ns();

        // Arrival.
        let a = &spec.arrival;
        if !(a.mean.is_finite() && a.mean > 0.0) {
            return Err(perr(
                "arrival.mean",
                format!("arrival.mean must be > 0, got {}", a.mean),
            ));
        }
        let mean_ns = a.mean * unit_ns;
        let check_weights = |w: &Option<Vec<f64>>, key: &str, n: usize| -> TmResult<Vec<f64>> {
            match w {
                None => Ok(vec![1.0; n]),
                Some(v) => {
                    let p = format!("arrival.{key}");
                    if v.len() != n {
                        return Err(perr(&p, format!("{p} needs {n} weights, got {}", v.len())));
                    }
                    for (i, &x) in v.iter().enumerate() {
                        if !(x.is_finite() && x >= 0.0) {
                            return Err(perr(
                                &format!("{p}[{i}]"),
                                format!("{p}[{i}] must be a weight >= 0, got {x}"),
                            ));
                        }
                    }
                    Ok(v.clone())
                }
            }
        };
        let weekly = check_weights(&a.weekly, "weekly", 7)?;
        let daily = check_weights(&a.daily, "daily", 24)?;
        let week_cum = if a.weekly.is_some() || a.daily.is_some() {
            let mut c = vec![0.0; 169];
            for h in 0..168 {
                let w = weekly[h / 24] * daily[h % 24];
                c[h + 1] = c[h] + w * HOUR_NS as f64 / mean_ns;
            }
            if c[168] <= 0.0 {
                return Err(perr(
                    "arrival",
                    "arrival: the weekly and daily weights leave no hour with arrivals".into(),
                ));
            }
            Some(c)
        } else {
            None
        };
        let arrival = ArrivalModel { mean_ns, week_cum };

        // Segments.
        let seg_names: Vec<String> = if spec.segments.is_empty() {
            vec!["all".to_string()]
        } else {
            spec.segments.iter().map(|s| s.name.clone()).collect()
        };
        let segs = unique("segments", seg_names.iter().map(|s| s.as_str()), "segment")?;
        let mut seg_cum = Vec::with_capacity(seg_names.len());
        if spec.segments.is_empty() {
            seg_cum.push(1.0);
        } else {
            let mut acc = 0.0;
            for (i, s) in spec.segments.iter().enumerate() {
                acc += prob(&format!("segments[{i}].p"), s.p)?;
                seg_cum.push(acc);
            }
            if (acc - 1.0).abs() > 1e-9 {
                return Err(perr(
                    "segments",
                    format!("segments: the shares p must sum to 1, they sum to {acc}"),
                ));
            }
            if let Some(last) = seg_cum.last_mut() {
                *last = 1.0;
            }
        }

        let mut ctx = Ctx {
            segs,
            seg_names: seg_names.clone(),
            attr_idx: HashMap::new(),
            attr_names: Vec::new(),
            attrs: &[],
            acts: HashMap::new(),
            act_names: Vec::new(),
            labels: HashMap::new(),
        };

        // Case attributes.
        ctx.attr_idx = unique(
            "case_attributes",
            spec.case_attributes.iter().map(|a| a.name()),
            "case attribute",
        )?;
        ctx.attr_names = spec
            .case_attributes
            .iter()
            .map(|a| a.name().to_string())
            .collect();
        let mut attrs = Vec::with_capacity(spec.case_attributes.len());
        for (i, ca) in spec.case_attributes.iter().enumerate() {
            let p = format!("case_attributes[{i}]");
            attrs.push(match ca {
                CaseAttribute::Categorical {
                    name,
                    values,
                    weights,
                    by_segment,
                } => {
                    if values.is_empty() {
                        return Err(perr(
                            &format!("{p}.values"),
                            format!("{p}.values must not be empty"),
                        ));
                    }
                    let mut seen = HashSet::new();
                    for (k, v) in values.iter().enumerate() {
                        if !seen.insert(v) {
                            return Err(perr(
                                &format!("{p}.values[{k}]"),
                                format!("{p}.values[{k}]: \"{v}\" is listed twice"),
                            ));
                        }
                    }
                    let cum = |w: &Vec<f64>, wp: &str| -> TmResult<Vec<f64>> {
                        if w.len() != values.len() {
                            return Err(perr(
                                wp,
                                format!(
                                    "{wp} needs one weight per value ({}), got {}",
                                    values.len(),
                                    w.len()
                                ),
                            ));
                        }
                        let mut c = Vec::with_capacity(w.len());
                        let mut acc = 0.0;
                        for (k, &x) in w.iter().enumerate() {
                            if !(x.is_finite() && x >= 0.0) {
                                return Err(perr(
                                    &format!("{wp}[{k}]"),
                                    format!("{wp}[{k}] must be a weight >= 0, got {x}"),
                                ));
                            }
                            acc += x;
                            c.push(acc);
                        }
                        if acc <= 0.0 {
                            return Err(perr(wp, format!("{wp}: the weights sum to 0")));
                        }
                        for x in &mut c {
                            *x /= acc;
                        }
                        Ok(c)
                    };
                    let base = cum(weights, &format!("{p}.weights"))?;
                    let per = ctx.per_seg(&p, by_segment, base, |w, wp| cum(w, wp))?;
                    AttrModel::Cat {
                        name: name.clone(),
                        values: values.clone(),
                        cum: per,
                    }
                }
                CaseAttribute::Numeric {
                    name,
                    dist,
                    by_segment,
                    integer,
                } => {
                    let base = Sampler::new(dist, &format!("{p}.dist"), false)?;
                    let per =
                        ctx.per_seg(&p, by_segment, base, |d, dp| Sampler::new(d, dp, false))?;
                    AttrModel::Num {
                        name: name.clone(),
                        per_seg: per,
                        integer: *integer,
                    }
                }
                CaseAttribute::Bool {
                    name,
                    p: pr,
                    by_segment,
                } => {
                    let base = prob(&format!("{p}.p"), *pr)?;
                    let per = ctx.per_seg(&p, by_segment, base, |&v, pp| prob(pp, v))?;
                    AttrModel::Bool {
                        name: name.clone(),
                        p: per,
                    }
                }
            });
        }
        ctx.attrs = &attrs;

        // Resources.
        let pool_idx = unique(
            "resources",
            spec.resources.iter().map(|r| r.name.as_str()),
            "resource pool",
        )?;
        let pool_names: Vec<String> = spec.resources.iter().map(|r| r.name.clone()).collect();
        let mut pools = Vec::with_capacity(spec.resources.len());
        for (i, r) in spec.resources.iter().enumerate() {
            let p = format!("resources[{i}]");
            if r.capacity == 0 || r.capacity > 1_000_000 {
                return Err(perr(
                    &format!("{p}.capacity"),
                    format!("{p}.capacity must be in [1, 1000000], got {}", r.capacity),
                ));
            }
            let calendar = match &r.hours {
                Some(h) => Some(Calendar::new(h, &format!("{p}.hours"))?),
                None => None,
            };
            pools.push(PoolModel {
                name: r.name.clone(),
                capacity: r.capacity,
                calendar,
            });
        }

        // Activities.
        ctx.acts = unique(
            "activities",
            spec.activities.iter().map(|a| a.name.as_str()),
            "activity",
        )?;
        ctx.act_names = spec.activities.iter().map(|a| a.name.clone()).collect();
        if spec.activities.is_empty() {
            return Err(perr(
                "activities",
                "activities: declare at least one activity".into(),
            ));
        }
        let mut acts = Vec::with_capacity(spec.activities.len());
        for (i, act) in spec.activities.iter().enumerate() {
            let p = format!("activities[{i}]");
            let Activity {
                name,
                duration,
                by_segment,
                resource,
                lifecycle,
            } = act;
            let base = Sampler::new(duration, &format!("{p}.duration"), true)?;
            let dur = ctx.per_seg(&p, by_segment, base, |d, dp| Sampler::new(d, dp, true))?;
            let pool = match resource {
                Some(r) => Some(lookup(
                    &pool_idx,
                    r,
                    &format!("{p}.resource"),
                    "resource pool",
                    &pool_names,
                )?),
                None => None,
            };
            acts.push(ActModel {
                name: name.clone(),
                dur,
                pool,
                lifecycle: *lifecycle,
                drift_dur: None,
                drift_factor: 1.0,
            });
        }

        // Flow.
        let mut flow = ctx.node(&spec.flow, "flow")?;
        if min_steps(&flow) == 0 {
            return Err(perr(
                "flow",
                "flow: a case can pass through the flow without any step (every case needs at least one event); make sure some step is always done".into(),
            ));
        }

        // Deviations.
        let mut dev_names = Vec::new();
        let mut devs = Vec::new();
        let mut dev_cum = Vec::new();
        let mut acc = 0.0;
        for (i, d) in spec.deviations.iter().enumerate() {
            let p = format!("deviations[{i}]");
            let act = |n: &str, key: &str| {
                lookup(
                    &ctx.acts,
                    n,
                    &format!("{p}.{key}"),
                    "activity",
                    &ctx.act_names,
                )
            };
            let (kind, rate, name) = match d {
                Deviation::Skip { step, rate, name } => (
                    DevKind::Skip(act(step, "step")?),
                    *rate,
                    name.clone().unwrap_or_else(|| format!("skip {step}")),
                ),
                Deviation::Swap {
                    first,
                    second,
                    rate,
                    name,
                } => {
                    let a = act(first, "first")?;
                    let b = act(second, "second")?;
                    if a == b {
                        return Err(perr(&p, format!("{p}: first and second must differ")));
                    }
                    (
                        DevKind::Swap(a, b),
                        *rate,
                        name.clone()
                            .unwrap_or_else(|| format!("swap {first}/{second}")),
                    )
                }
                Deviation::Repeat { step, rate, name } => (
                    DevKind::Repeat(act(step, "step")?),
                    *rate,
                    name.clone().unwrap_or_else(|| format!("repeat {step}")),
                ),
            };
            acc += prob(&format!("{p}.rate"), rate)?;
            if dev_names.contains(&name) || name == "none" {
                return Err(perr(
                    &format!("{p}.name"),
                    format!("{p}.name: \"{name}\" is used twice"),
                ));
            }
            dev_names.push(name);
            devs.push(kind);
            dev_cum.push(acc);
        }
        if acc > 1.0 + 1e-9 {
            return Err(perr(
                "deviations",
                format!("deviations: the rates sum to {acc}, more than 1"),
            ));
        }
        if devs.len() > 254 {
            return Err(perr(
                "deviations",
                "deviations: at most 254 deviations".into(),
            ));
        }

        // Drift.
        let drift = match &spec.drift {
            None => None,
            Some(d) => {
                let at =
                    match (&d.at, d.at_fraction) {
                        (Some(t), None) => DriftAt::Time(t.to_ns("drift.at")?),
                        (None, Some(f)) => DriftAt::Fraction(prob("drift.at_fraction", f)?),
                        _ => return Err(perr(
                            "drift",
                            "drift: give exactly one of \"at\" (a date-time) and \"at_fraction\""
                                .into(),
                        )),
                    };
                let mut overrides = HashMap::new();
                for (l, &v) in &d.choice_overrides {
                    let p = format!("drift.choice_overrides.{l}");
                    if !ctx.labels.contains_key(l) {
                        let mut known: Vec<&String> = ctx.labels.keys().collect();
                        known.sort();
                        return Err(perr(
                            &p,
                            format!(
                                "{p}: no choice branch has the label \"{l}\" (labels: {})",
                                if known.is_empty() {
                                    "none".to_string()
                                } else {
                                    known
                                        .iter()
                                        .map(|s| s.as_str())
                                        .collect::<Vec<_>>()
                                        .join(", ")
                                }
                            ),
                        ));
                    }
                    overrides.insert(l.clone(), prob(&p, v)?);
                }
                set_drift_p(&mut flow, &overrides, &spec.flow);
                for (a, dist) in &d.duration_overrides {
                    let p = format!("drift.duration_overrides.{a}");
                    let k = lookup(&ctx.acts, a, &p, "activity", &ctx.act_names)?;
                    acts[k as usize].drift_dur = Some(Sampler::new(dist, &p, true)?);
                }
                for (a, &f) in &d.duration_factors {
                    let p = format!("drift.duration_factors.{a}");
                    let k = lookup(&ctx.acts, a, &p, "activity", &ctx.act_names)?;
                    if !(f.is_finite() && f >= 0.0) {
                        return Err(perr(&p, format!("{p} must be a factor >= 0, got {f}")));
                    }
                    acts[k as usize].drift_factor = f;
                }
                let mut add_after = Vec::new();
                for (i, s) in d.add_step_after.iter().enumerate() {
                    let p = format!("drift.add_step_after[{i}]");
                    let a = lookup(
                        &ctx.acts,
                        &s.after,
                        &format!("{p}.after"),
                        "activity",
                        &ctx.act_names,
                    )?;
                    let b = lookup(
                        &ctx.acts,
                        &s.step,
                        &format!("{p}.step"),
                        "activity",
                        &ctx.act_names,
                    )?;
                    add_after.push((a, b));
                }
                let mut remove = Vec::new();
                for (i, s) in d.remove_steps.iter().enumerate() {
                    let p = format!("drift.remove_steps[{i}]");
                    remove.push(lookup(&ctx.acts, s, &p, "activity", &ctx.act_names)?);
                }
                Some(DriftModel {
                    at,
                    add_after,
                    remove,
                })
            }
        };

        // Event attributes.
        let mut ev_attrs = Vec::new();
        let mut seen: HashSet<&str> = ["resource", "lifecycle"].into_iter().collect();
        for (i, e) in spec.event_attributes.iter().enumerate() {
            let p = format!("event_attributes[{i}]");
            if e.name.is_empty() || !seen.insert(e.name.as_str()) {
                return Err(perr(
                    &format!("{p}.name"),
                    format!("{p}.name: \"{}\" is empty, reserved or used twice", e.name),
                ));
            }
            let base = match &e.dist {
                Some(d) => Some(Sampler::new(d, &format!("{p}.dist"), false)?),
                None => None,
            };
            let mut per_act = vec![base; acts.len()];
            for (a, d) in &e.by_activity {
                let ap = format!("{p}.by_activity.{a}");
                let k = lookup(&ctx.acts, a, &ap, "activity", &ctx.act_names)?;
                per_act[k as usize] = Some(Sampler::new(d, &ap, false)?);
            }
            ev_attrs.push(EvAttrModel {
                name: e.name.clone(),
                per_act,
            });
        }

        Ok(Model {
            start,
            unit_ns,
            case_prefix: spec.case_prefix.clone(),
            arrival,
            seg_names,
            seg_cum,
            attrs,
            pools,
            acts,
            flow,
            dev_names,
            devs,
            dev_cum,
            drift,
            ev_attrs,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn hours(days: &[&str], from: f64, to: f64) -> Calendar {
        Calendar::new(
            &Hours {
                days: days.iter().map(|s| s.to_string()).collect(),
                from,
                to,
            },
            "h",
        )
        .unwrap()
    }

    #[test]
    fn calendar_pauses_overnight_and_weekends() {
        let cal = hours(&["mon", "tue", "wed", "thu", "fri"], 8.0, 17.0);
        let mon = MONDAY_NS + 2_000 * WEEK_NS;
        // Saturday noon -> next Monday 08:00.
        assert_eq!(
            cal.next_open(mon + 5 * DAY_NS + 12 * HOUR_NS),
            mon + WEEK_NS + 8 * HOUR_NS
        );
        // Monday 16:00 + 3 h of work -> Tuesday 10:00.
        assert_eq!(
            cal.finish(mon + 16 * HOUR_NS, 3 * HOUR_NS),
            mon + DAY_NS + 10 * HOUR_NS
        );
        // Friday 16:00 + 2 h -> Monday 09:00.
        assert_eq!(
            cal.finish(mon + 4 * DAY_NS + 16 * HOUR_NS, 2 * HOUR_NS),
            mon + WEEK_NS + 9 * HOUR_NS
        );
        // Before the epoch works too.
        let early = MONDAY_NS - 10 * WEEK_NS;
        assert_eq!(cal.next_open(early + 3 * HOUR_NS), early + 8 * HOUR_NS);
    }

    #[test]
    fn arrival_inverse_matches_cumulative() {
        let mut c = vec![0.0; 169];
        for h in 0..168 {
            let w = if (8..18).contains(&(h % 24)) && h / 24 < 6 {
                1.0
            } else {
                0.0
            };
            c[h + 1] = c[h] + w * 6.0;
        }
        let m = ArrivalModel {
            mean_ns: 600e9,
            week_cum: Some(c),
        };
        let t0 = MONDAY_NS + 2_900 * WEEK_NS + 9 * HOUR_NS + 1_234_567;
        let s = m.cum_at(t0);
        let t = m.time_at(s).unwrap();
        assert!((t - t0).abs() < 1_000, "{t} vs {t0}");
        // A target falling in a closed hour maps to the next opening.
        let sat_night = m.cum_at(MONDAY_NS + 5 * DAY_NS + 20 * HOUR_NS);
        let t = m.time_at(sat_night + 1e-9).unwrap();
        assert_eq!((t - MONDAY_NS).rem_euclid(WEEK_NS) / HOUR_NS, 8);
    }
}
