//! The simulation engine: plans drawn in parallel, then one discrete-event run over the
//! resource pools.
//!
//! **Phase 0, arrivals.** Arrivals form a Poisson process whose rate `λ(t)` is constant or
//! follows a weekly × daily pattern (piecewise constant per hour). With `Λ(t) = ∫ λ` the
//! cumulative rate, the points `Λ⁻¹(Λ(start) + S_k)`, where `S_k` are the partial sums of
//! independent Exp(1) draws, form a non-homogeneous Poisson process with rate `λ` (the
//! time-change / inversion method; Çinlar 1975, *Introduction to Stochastic Processes*, and
//! Lewis & Shedler 1979, Naval Research Logistics Quarterly 26(3), who give the thinning
//! alternative \[mem\]). The Exp(1) draws are made in parallel; the prefix sum is sequential.
//!
//! **Phase 1, plans** (parallel over cases). Each case draws its segment, its attributes and
//! its *plan*: the flow tree with every choice and loop resolved into a small DAG of activity
//! instances (a parallel block forks, the next node joins), then the drift (for cases arriving
//! at or after the change time) and at most one deviation are applied, and the service times
//! and event attributes are drawn.
//!
//! **Phase 2, queues** (sequential). A discrete-event simulation (see Law, *Simulation Modeling
//! and Analysis*, 5th ed. 2015, ch. 1 \[mem\]) with one binary heap of completion events. A node
//! becomes ready when all its predecessors completed; it then takes a free member of its
//! resource pool or joins the pool's first-in, first-out queue; a member that completes takes
//! the head of the queue. Working hours delay a start to the next opening and pause work while
//! closed. Events at equal times are handled in node order (case, then plan order), so the run
//! is deterministic.
//!
//! **Determinism.** Case `k` draws from its own generator, Xoshiro256++ seeded with
//! `seed ^ splitmix64(2k + stream)` (Blackman & Vigna 2021, ACM TOMS 47(4), for both
//! generators \[mem\]), so results do not depend on the number of threads.

use std::cmp::Reverse;
use std::collections::{BinaryHeap, VecDeque};
use std::sync::Arc;

use rand::{Rng, SeedableRng};
use rand_distr::{Distribution, Exp1};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use super::compile::{AttrModel, DevKind, DriftAt, Model, NodeModel};
use super::spec::ProcessSpec;
use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::log::{CaseAttrs, Column, LogInput, Values};

/// Cases per parallel work unit.
const CHUNK: usize = 4096;
/// Heap operations between two cancellation checks.
const CHECK_EVERY: u64 = 1 << 16;
const NO_SERVER: u32 = u32::MAX;

/// The hidden facts behind a simulated log, one entry per case in case-code order.
#[derive(Debug, Clone, PartialEq)]
pub struct Truth {
    /// Segment of each case: an index into `segment_names`.
    pub segment: Vec<u32>,
    /// Segment names, in spec order (`["all"]` when the spec has none).
    pub segment_names: Vec<String>,
    /// Deviation of each case: 0 = none, `k` = the `k`-th deviation of the spec
    /// (`deviation_names[k]`).
    pub deviation: Vec<u8>,
    /// `deviation_names[0] == "none"`, then one name per spec deviation.
    pub deviation_names: Vec<String>,
    /// When the drift happens (ns since the epoch), if the spec has one.
    pub change_time: Option<i64>,
    /// Whether the case arrived at or after `change_time` (all false without a drift).
    pub after_change: Vec<bool>,
}

/// A simulated event log and its ground truth.
#[derive(Debug, Clone)]
pub struct Simulation {
    /// Columns ready for [`crate::EventLog::build`]: case, activity, time, resource (pool
    /// member, null for activities without a pool), lifecycle ("start"/"complete", when some
    /// activity writes start events), event attributes, and case attributes per case.
    pub input: LogInput,
    /// The ground truth.
    pub truth: Truth,
}

fn splitmix64(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

fn case_rng(seed: u64, case: usize, stream: u64) -> Xoshiro256PlusPlus {
    Xoshiro256PlusPlus::seed_from_u64(seed ^ splitmix64(((case as u64) << 1) | stream))
}

/// Split `v` into the consecutive pieces `off[i]..off[i + 1]`.
fn split_mut<'a, T>(mut v: &'a mut [T], off: &[usize]) -> Vec<&'a mut [T]> {
    let mut out = Vec::with_capacity(off.len().saturating_sub(1));
    for w in off.windows(2) {
        let (a, b) = std::mem::take(&mut v).split_at_mut(w[1] - w[0]);
        out.push(a);
        v = b;
    }
    out
}

fn limit(msg: impl Into<String>) -> TmError {
    TmError::Limit {
        message: msg.into(),
    }
}

/// Plans of a run of consecutive cases (phase 1 output).
#[derive(Default)]
struct Chunk {
    seg: Vec<u32>,
    dev: Vec<u8>,
    /// `n_attrs` values per case (category code / 0-1 / number).
    vals: Vec<f64>,
    /// Nodes per case.
    n_nodes: Vec<u32>,
    act: Vec<u32>,
    dur: Vec<i64>,
    npred: Vec<u32>,
    n_succ: Vec<u32>,
    /// Successors, as indices local to the case.
    succ: Vec<u32>,
    /// `n_ev` values per node, NaN where the attribute does not apply.
    ev: Vec<f64>,
}

/// Work buffers of [`Planner::finish`].
#[derive(Default)]
struct Scratch {
    indeg: Vec<u32>,
    npred: Vec<u32>,
    order: Vec<u32>,
    newid: Vec<u32>,
    queue: VecDeque<u32>,
}

/// Builds the plan DAG of one case (reused across the cases of a chunk).
#[derive(Default)]
struct Planner {
    act: Vec<u32>,
    alive: Vec<bool>,
    edges: Vec<(u32, u32)>,
    /// Nodes were removed or inserted, so creation order may not be topological.
    reshaped: bool,
    scratch: Scratch,
}

impl Planner {
    fn clear(&mut self) {
        self.act.clear();
        self.alive.clear();
        self.edges.clear();
        self.reshaped = false;
    }

    fn add(&mut self, a: u32, preds: &[u32]) -> u32 {
        let id = self.act.len() as u32;
        self.act.push(a);
        self.alive.push(true);
        for &p in preds {
            self.edges.push((p, id));
        }
        id
    }

    /// Unfold `n` after the nodes in `preds`; on return `preds` holds the exit nodes.
    fn expand<R: Rng>(
        &mut self,
        n: &NodeModel,
        preds: &mut Vec<u32>,
        rng: &mut R,
        seg: u32,
        vals: &[f64],
        after: bool,
    ) {
        match n {
            NodeModel::Step(a) => {
                let id = self.add(*a, preds);
                preds.clear();
                preds.push(id);
            }
            NodeModel::Seq(v) => {
                for c in v {
                    self.expand(c, preds, rng, seg, vals, after);
                }
            }
            NodeModel::Par(v) => {
                let entry = preds.clone();
                preds.clear();
                let mut cur = Vec::with_capacity(entry.len().max(2));
                for c in v {
                    cur.clear();
                    cur.extend_from_slice(&entry);
                    self.expand(c, &mut cur, rng, seg, vals, after);
                    preds.extend_from_slice(&cur);
                }
                preds.sort_unstable();
                preds.dedup();
            }
            NodeModel::Choice(bs) => {
                let total: f64 = bs.iter().map(|b| b.weight(seg, vals, after)).sum();
                let u: f64 = rng.random::<f64>() * total.max(1.0);
                let mut acc = 0.0;
                for b in bs {
                    let w = b.weight(seg, vals, after);
                    acc += w;
                    if w > 0.0 && u < acc {
                        if let Some(t) = &b.then {
                            self.expand(t, preds, rng, seg, vals, after);
                        }
                        return;
                    }
                }
            }
            NodeModel::Loop { body, redo, p, max } => {
                let p = p[seg as usize];
                self.expand(body, preds, rng, seg, vals, after);
                let mut k = 0;
                while k < *max && rng.random::<f64>() < p {
                    if let Some(r) = redo {
                        self.expand(r, preds, rng, seg, vals, after);
                    }
                    self.expand(body, preds, rng, seg, vals, after);
                    k += 1;
                }
            }
        }
    }

    /// Drop every node of activity `a`, linking its predecessors to its successors.
    fn remove_all(&mut self, a: u32) -> bool {
        let mut any = false;
        for x in 0..self.act.len() as u32 {
            if !self.alive[x as usize] || self.act[x as usize] != a {
                continue;
            }
            any = true;
            self.reshaped = true;
            self.alive[x as usize] = false;
            let preds: Vec<u32> = self
                .edges
                .iter()
                .filter(|e| e.1 == x)
                .map(|e| e.0)
                .collect();
            let succs: Vec<u32> = self
                .edges
                .iter()
                .filter(|e| e.0 == x)
                .map(|e| e.1)
                .collect();
            self.edges.retain(|e| e.0 != x && e.1 != x);
            for &p in &preds {
                for &s in &succs {
                    self.edges.push((p, s));
                }
            }
        }
        any
    }

    /// Insert a node of activity `b` right after the first node of activity `a`.
    fn insert_after(&mut self, a: u32, b: u32) -> bool {
        let Some(x) = (0..self.act.len()).find(|&i| self.alive[i] && self.act[i] == a) else {
            return false;
        };
        let x = x as u32;
        self.reshaped = true;
        let y = self.add(b, &[]);
        for e in &mut self.edges {
            if e.0 == x {
                e.0 = y;
            }
        }
        self.edges.push((x, y));
        true
    }

    /// Where a node of `a` is directly followed by a node of `b`, trade their activities.
    fn swap(&mut self, a: u32, b: u32) -> bool {
        let hit = self.edges.iter().find(|&&(x, y)| {
            self.alive[x as usize]
                && self.alive[y as usize]
                && self.act[x as usize] == a
                && self.act[y as usize] == b
        });
        match hit.copied() {
            Some((x, y)) => {
                self.act[x as usize] = b;
                self.act[y as usize] = a;
                true
            }
            None => false,
        }
    }

    /// Write the live nodes in topological order into `out`; returns the node count.
    fn finish(&mut self, out: &mut Chunk) -> usize {
        let n = self.act.len();
        self.edges.sort_unstable();
        self.edges.dedup();
        let edges = &self.edges;
        let s = &mut self.scratch;
        s.indeg.clear();
        s.indeg.resize(n, 0);
        for &(_, y) in edges {
            s.indeg[y as usize] += 1;
        }
        s.npred.clear();
        s.npred.extend_from_slice(&s.indeg);
        s.order.clear();
        if self.reshaped {
            // Kahn's algorithm over the live nodes, smallest id first.
            s.queue.clear();
            s.queue.extend(
                (0..n as u32).filter(|&i| self.alive[i as usize] && s.indeg[i as usize] == 0),
            );
            while let Some(x) = s.queue.pop_front() {
                s.order.push(x);
                let lo = edges.partition_point(|e| e.0 < x);
                for &(_, y) in edges[lo..].iter().take_while(|e| e.0 == x) {
                    s.indeg[y as usize] -= 1;
                    if s.indeg[y as usize] == 0 {
                        s.queue.push_back(y);
                    }
                }
            }
        } else {
            // Nodes were created after their predecessors: creation order is topological.
            s.order.extend(0..n as u32);
        }
        s.newid.clear();
        s.newid.resize(n, u32::MAX);
        for (k, &x) in s.order.iter().enumerate() {
            s.newid[x as usize] = k as u32;
        }
        let mut e = 0usize;
        for &x in &s.order {
            out.act.push(self.act[x as usize]);
            let lo = if self.reshaped {
                edges.partition_point(|e| e.0 < x)
            } else {
                e
            };
            let mut k = 0u32;
            for &(_, y) in edges[lo..].iter().take_while(|e| e.0 == x) {
                out.succ.push(s.newid[y as usize]);
                k += 1;
            }
            e = lo + k as usize;
            out.n_succ.push(k);
            out.npred.push(s.npred[x as usize]);
        }
        s.order.len()
    }
}

fn plan_chunk(
    m: &Model,
    seed: u64,
    lo: usize,
    hi: usize,
    arrivals: &[i64],
    change: Option<i64>,
) -> TmResult<Chunk> {
    let n = hi - lo;
    let mut out = Chunk {
        act: Vec::with_capacity(n * 12),
        dur: Vec::with_capacity(n * 12),
        npred: Vec::with_capacity(n * 12),
        n_succ: Vec::with_capacity(n * 12),
        succ: Vec::with_capacity(n * 14),
        ..Chunk::default()
    };
    let na = m.attrs.len();
    let nev = m.ev_attrs.len();
    let mut pl = Planner::default();
    let mut frontier: Vec<u32> = Vec::new();
    let mut vals = vec![0.0f64; na];
    for (k, &arrival) in arrivals.iter().enumerate().take(hi).skip(lo) {
        let mut rng = case_rng(seed, k, 1);
        let u: f64 = rng.random();
        let seg = m
            .seg_cum
            .iter()
            .position(|&c| u < c)
            .unwrap_or(m.seg_cum.len() - 1) as u32;
        let s = seg as usize;
        for (i, a) in m.attrs.iter().enumerate() {
            vals[i] = match a {
                AttrModel::Cat { cum, .. } => {
                    let u: f64 = rng.random();
                    let c = &cum[s];
                    c.iter().position(|&x| u < x).unwrap_or(c.len() - 1) as f64
                }
                AttrModel::Num {
                    per_seg, integer, ..
                } => {
                    let v = per_seg[s].sample(&mut rng);
                    if *integer {
                        v.round()
                    } else {
                        v
                    }
                }
                AttrModel::Bool { p, .. } => f64::from(u8::from(rng.random::<f64>() < p[s])),
            };
        }
        let after = change.is_some_and(|c| arrival >= c);
        pl.clear();
        frontier.clear();
        pl.expand(&m.flow, &mut frontier, &mut rng, seg, &vals, after);
        if after {
            if let Some(d) = &m.drift {
                for &a in &d.remove {
                    pl.remove_all(a);
                }
                for &(a, b) in &d.add_after {
                    pl.insert_after(a, b);
                }
            }
        }
        let mut dev = 0u8;
        if !m.devs.is_empty() {
            let u: f64 = rng.random();
            if let Some(i) = m.dev_cum.iter().position(|&c| u < c) {
                let applied = match m.devs[i] {
                    DevKind::Skip(a) => pl.remove_all(a),
                    DevKind::Swap(a, b) => pl.swap(a, b),
                    DevKind::Repeat(a) => pl.insert_after(a, a),
                };
                if applied {
                    dev = (i + 1) as u8;
                }
            }
        }
        let first = out.act.len();
        let nn = pl.finish(&mut out);
        if nn == 0 {
            return Err(TmError::data(format!(
                "case {}{} (code {k}) has no step left after the drift or a deviation removed steps; every case needs at least one event",
                m.case_prefix,
                k + 1
            )));
        }
        for i in first..first + nn {
            let act = &m.acts[out.act[i] as usize];
            let mut x = match (&act.drift_dur, after) {
                (Some(d), true) => d.sample(&mut rng),
                _ => act.dur[s].sample(&mut rng),
            };
            if after {
                x *= act.drift_factor;
            }
            let ns = (x.max(0.0) * m.unit_ns).round();
            if ns >= 1e18 || ns.is_nan() {
                return Err(limit(format!(
                    "a service time of activity '{}' ({x} time units) is too long to represent in nanoseconds",
                    act.name
                )));
            }
            out.dur.push(ns as i64);
            for e in &m.ev_attrs {
                out.ev.push(match &e.per_act[out.act[i] as usize] {
                    Some(d) => d.sample(&mut rng),
                    None => f64::NAN,
                });
            }
        }
        debug_assert_eq!(out.ev.len(), out.act.len() * nev);
        out.seg.push(seg);
        out.dev.push(dev);
        out.vals.extend_from_slice(&vals);
        out.n_nodes.push(nn as u32);
    }
    Ok(out)
}

/// The discrete-event run over the resource pools (phase 2).
struct Des<'a> {
    m: &'a Model,
    act: &'a [u32],
    dur: &'a [i64],
    succ_off: &'a [usize],
    succ: &'a [u32],
    npred: Vec<u32>,
    start: Vec<i64>,
    end: Vec<i64>,
    server: Vec<u32>,
    base: Vec<u32>,
    free: Vec<Vec<u32>>,
    queue: Vec<VecDeque<u32>>,
    heap: BinaryHeap<Reverse<(i64, u32)>>,
}

impl Des<'_> {
    fn push(&mut self, t: i64, node: u32) {
        // Ties in time go by node id (case order, then plan order): deterministic.
        self.heap.push(Reverse((t, node)));
    }

    fn overflow() -> TmError {
        limit("simulated times run past the year 2262 (the end of 64-bit nanosecond time); simulate fewer cases or make arrivals more frequent")
    }

    fn begin(&mut self, node: u32, pool: usize, member: u32, t: i64) -> TmResult<()> {
        let d = self.dur[node as usize];
        let (s, e) = match &self.m.pools[pool].calendar {
            Some(c) => {
                let s = c.next_open(t);
                (s, c.finish(s, d))
            }
            None => (t, t.checked_add(d).ok_or_else(Self::overflow)?),
        };
        if e == i64::MAX {
            return Err(Self::overflow());
        }
        self.start[node as usize] = s;
        self.end[node as usize] = e;
        self.server[node as usize] = self.base[pool] + member;
        self.push(e, node);
        Ok(())
    }

    fn ready(&mut self, node: u32, t: i64) -> TmResult<()> {
        match self.m.acts[self.act[node as usize] as usize].pool {
            None => {
                let e = t
                    .checked_add(self.dur[node as usize])
                    .ok_or_else(Self::overflow)?;
                self.start[node as usize] = t;
                self.end[node as usize] = e;
                self.push(e, node);
            }
            Some(p) => {
                let p = p as usize;
                match self.free[p].pop() {
                    Some(member) => self.begin(node, p, member, t)?,
                    None => self.queue[p].push_back(node),
                }
            }
        }
        Ok(())
    }

    fn complete(&mut self, node: u32, t: i64) -> TmResult<()> {
        let srv = self.server[node as usize];
        if srv != NO_SERVER {
            if let Some(p) = self.m.acts[self.act[node as usize] as usize].pool {
                let p = p as usize;
                let member = srv - self.base[p];
                match self.queue[p].pop_front() {
                    Some(next) => self.begin(next, p, member, t)?,
                    None => self.free[p].push(member),
                }
            }
        }
        for j in self.succ_off[node as usize]..self.succ_off[node as usize + 1] {
            let s = self.succ[j];
            self.npred[s as usize] -= 1;
            if self.npred[s as usize] == 0 {
                self.ready(s, t)?;
            }
        }
        Ok(())
    }
}

/// Simulate `n_cases` cases of `spec` with random seed `seed`.
///
/// The result does not depend on the number of rayon threads. Case `k` (0-based) gets case
/// code `k` and the label `"{case_prefix}{k + 1}"`, zero-padded to at least 6 digits. Events
/// are grouped by case, in time order within a case. `ctl` is polled between chunks of cases
/// and every 65 536 queue events; progress counts each case twice (plan, then queues).
///
/// # Errors
/// [`TmError::Parameter`] / [`TmError::Schema`] for a bad spec (with the JSON path),
/// [`TmError::Parameter`] for `n_cases == 0`, [`TmError::Limit`] when times overflow or the
/// plan has more than 2³² − 2 activity instances, [`TmError::Interrupted`] on cancellation.
pub fn simulate(
    spec: &ProcessSpec,
    n_cases: usize,
    seed: u64,
    ctl: &Control,
) -> TmResult<Simulation> {
    let m = Model::compile(spec)?;
    if n_cases == 0 {
        return Err(TmError::param("n_cases", "n_cases must be at least 1"));
    }
    if n_cases >= u32::MAX as usize {
        return Err(TmError::param(
            "n_cases",
            format!("n_cases must be below {}, got {n_cases}", u32::MAX),
        ));
    }
    ctl.set_total(2 * n_cases as u64);
    ctl.check()?;

    // Phase 0: arrivals.
    let gaps: Vec<f64> = (0..n_cases)
        .into_par_iter()
        .with_min_len(CHUNK)
        .map(|k| {
            let mut r = case_rng(seed, k, 0);
            Exp1.sample(&mut r)
        })
        .collect();
    let mut arrivals = Vec::with_capacity(n_cases);
    let mut s = m.arrival.cum_at(m.start);
    let mut prev = m.start;
    for g in gaps {
        s += g;
        let t = m.arrival.time_at(s).ok_or_else(Des::overflow)?.max(prev);
        arrivals.push(t);
        prev = t;
    }
    let change = m.drift.as_ref().map(|d| match d.at {
        DriftAt::Time(t) => t,
        DriftAt::Fraction(f) => arrivals[((f * n_cases as f64) as usize).min(n_cases - 1)],
    });

    // Phase 1: plans, in parallel chunks.
    let n_chunks = n_cases.div_ceil(CHUNK);
    let chunks: Vec<Chunk> = (0..n_chunks)
        .into_par_iter()
        .map(|c| {
            ctl.check()?;
            let lo = c * CHUNK;
            let hi = (lo + CHUNK).min(n_cases);
            let out = plan_chunk(&m, seed, lo, hi, &arrivals, change);
            ctl.advance((hi - lo) as u64);
            out
        })
        .collect::<TmResult<Vec<_>>>()?;

    let n_nodes: usize = chunks.iter().map(|c| c.act.len()).sum();
    if n_nodes >= u32::MAX as usize {
        return Err(limit(format!(
            "the plans hold {n_nodes} activity instances, more than 2^32 - 2; simulate fewer cases"
        )));
    }
    let na = m.attrs.len();
    let nev = m.ev_attrs.len();
    let mut seg = Vec::with_capacity(n_cases);
    let mut dev = Vec::with_capacity(n_cases);
    let mut vals = Vec::with_capacity(n_cases * na);
    let mut case_off = Vec::with_capacity(n_cases + 1);
    let mut act = Vec::with_capacity(n_nodes);
    let mut dur = Vec::with_capacity(n_nodes);
    let mut npred = Vec::with_capacity(n_nodes);
    let mut succ_off = Vec::with_capacity(n_nodes + 1);
    let mut succ = Vec::new();
    let mut ev = Vec::with_capacity(n_nodes * nev);
    case_off.push(0usize);
    succ_off.push(0usize);
    for ch in chunks {
        let mut sp = 0usize;
        let mut node = 0usize;
        for &nn in &ch.n_nodes {
            let case_base = act.len() as u32;
            for i in node..node + nn as usize {
                act.push(ch.act[i]);
                dur.push(ch.dur[i]);
                npred.push(ch.npred[i]);
                let k = ch.n_succ[i] as usize;
                for &y in &ch.succ[sp..sp + k] {
                    succ.push(case_base + y);
                }
                sp += k;
                succ_off.push(succ.len());
            }
            node += nn as usize;
            case_off.push(act.len());
        }
        seg.extend_from_slice(&ch.seg);
        dev.extend_from_slice(&ch.dev);
        vals.extend_from_slice(&ch.vals);
        ev.extend_from_slice(&ch.ev);
    }

    // Phase 2: queues.
    let mut base = Vec::with_capacity(m.pools.len());
    let mut acc = 0u32;
    for p in &m.pools {
        base.push(acc);
        acc += p.capacity;
    }
    let mut des = Des {
        m: &m,
        act: &act,
        dur: &dur,
        succ_off: &succ_off,
        succ: &succ,
        npred,
        start: vec![0; n_nodes],
        end: vec![0; n_nodes],
        server: vec![NO_SERVER; n_nodes],
        base,
        free: m
            .pools
            .iter()
            .map(|p| (0..p.capacity).rev().collect())
            .collect(),
        queue: vec![VecDeque::new(); m.pools.len()],
        heap: BinaryHeap::new(),
    };
    let mut ci = 0usize;
    let mut ops = 0u64;
    let mut reported = 0usize;
    loop {
        ops += 1;
        if ops % CHECK_EVERY == 0 {
            ctl.check()?;
            ctl.advance((ci - reported) as u64);
            reported = ci;
        }
        let next_arr = if ci < n_cases { arrivals[ci] } else { i64::MAX };
        match des.heap.peek() {
            Some(&Reverse((t, node))) if t < next_arr || ci == n_cases => {
                des.heap.pop();
                des.complete(node, t)?;
            }
            _ if ci < n_cases => {
                for node in case_off[ci]..case_off[ci + 1] {
                    if des.npred[node] == 0 {
                        des.ready(node as u32, next_arr)?;
                    }
                }
                ci += 1;
            }
            _ => break,
        }
    }
    ctl.advance((ci - reported) as u64);
    let Des {
        start, end, server, ..
    } = des;

    // Phase 3: rows, written in parallel chunks of cases straight into the columns.
    let lifecycle = m.acts.iter().any(|a| a.lifecycle);
    let has_pools = !m.pools.is_empty();
    let lc_of: Vec<bool> = m.acts.iter().map(|a| a.lifecycle).collect();
    let chunk_rows: Vec<usize> = (0..n_chunks)
        .into_par_iter()
        .map(|c| {
            let lo = c * CHUNK;
            let hi = (lo + CHUNK).min(n_cases);
            let nodes = case_off[lo]..case_off[hi];
            nodes.len() + act[nodes].iter().filter(|&&a| lc_of[a as usize]).count()
        })
        .collect();
    let mut row_off = Vec::with_capacity(n_chunks + 1);
    row_off.push(0usize);
    for r in &chunk_rows {
        row_off.push(row_off[row_off.len() - 1] + r);
    }
    let n_rows = row_off[n_chunks];
    let none_off = vec![0usize; n_chunks + 1];
    let pool_off = if has_pools { &row_off } else { &none_off };
    let lc_off = if lifecycle { &row_off } else { &none_off };
    let mut case = vec![0u32; n_rows];
    let mut activity = vec![0u32; n_rows];
    let mut time = vec![0i64; n_rows];
    let mut res = vec![0u32; pool_off[n_chunks]];
    let mut res_ok = vec![false; pool_off[n_chunks]];
    let mut lc = vec![0u32; lc_off[n_chunks]];
    let mut evc: Vec<(Vec<f64>, Vec<bool>)> = (0..nev)
        .map(|_| (vec![0.0; n_rows], vec![false; n_rows]))
        .collect();
    {
        struct Out<'a> {
            case: &'a mut [u32],
            act: &'a mut [u32],
            time: &'a mut [i64],
            res: &'a mut [u32],
            res_ok: &'a mut [bool],
            lc: &'a mut [u32],
            ev: Vec<(&'a mut [f64], &'a mut [bool])>,
        }
        let mut ev_parts: Vec<_> = evc
            .iter_mut()
            .map(|(v, ok)| {
                split_mut(v, &row_off)
                    .into_iter()
                    .zip(split_mut(ok, &row_off))
            })
            .collect();
        let outs: Vec<Out<'_>> = split_mut(&mut case, &row_off)
            .into_iter()
            .zip(split_mut(&mut activity, &row_off))
            .zip(split_mut(&mut time, &row_off))
            .zip(split_mut(&mut res, pool_off))
            .zip(split_mut(&mut res_ok, pool_off))
            .zip(split_mut(&mut lc, lc_off))
            .map(|(((((case, act), time), res), res_ok), lc)| Out {
                case,
                act,
                time,
                res,
                res_ok,
                lc,
                ev: ev_parts.iter_mut().filter_map(|it| it.next()).collect(),
            })
            .collect();
        outs.into_par_iter().enumerate().for_each(|(c, o)| {
            let lo = c * CHUNK;
            let hi = (lo + CHUNK).min(n_cases);
            let mut evs: Vec<(i64, u32, u8)> = Vec::new();
            let mut r = 0usize;
            let Out {
                case: o_case,
                act: o_act,
                time: o_time,
                res: o_res,
                res_ok: o_res_ok,
                lc: o_lc,
                ev: mut o_ev,
            } = o;
            for k in lo..hi {
                evs.clear();
                let b = case_off[k];
                for i in b..case_off[k + 1] {
                    let li = (i - b) as u32;
                    if lc_of[act[i] as usize] {
                        evs.push((start[i], li, 0));
                    }
                    evs.push((end[i], li, 1));
                }
                evs.sort_unstable();
                for &(t, li, phase) in &evs {
                    let i = b + li as usize;
                    o_case[r] = k as u32;
                    o_act[r] = act[i];
                    o_time[r] = t;
                    if has_pools && server[i] != NO_SERVER {
                        o_res[r] = server[i];
                        o_res_ok[r] = true;
                    }
                    if lifecycle {
                        o_lc[r] = u32::from(phase);
                    }
                    if phase == 1 {
                        for (j, (v, ok)) in o_ev.iter_mut().enumerate() {
                            let x = ev[i * nev + j];
                            if !x.is_nan() {
                                v[r] = x;
                                ok[r] = true;
                            }
                        }
                    }
                    r += 1;
                }
            }
        });
    }
    drop((act, dur, start, end, server, ev));

    let resource = has_pools.then(|| {
        let mut names = Vec::new();
        for p in &m.pools {
            for j in 1..=p.capacity {
                names.push(format!("{}-{j}", p.name));
            }
        }
        Column {
            name: "resource".into(),
            values: Values::Cat {
                codes: res,
                dict: Arc::new(names),
            },
            valid: Some(res_ok),
        }
        .normalised()
    });
    let lifecycle_col = lifecycle.then(|| {
        Column::new(
            "lifecycle",
            Values::Cat {
                codes: lc,
                dict: Arc::new(vec!["start".into(), "complete".into()]),
            },
        )
    });
    let event_attrs: Vec<Column> = m
        .ev_attrs
        .iter()
        .zip(evc)
        .map(|(e, (v, ok))| {
            Column {
                name: e.name.clone(),
                values: Values::F64(v),
                valid: Some(ok),
            }
            .normalised()
        })
        .collect();
    let case_attrs: Vec<Column> = m
        .attrs
        .iter()
        .enumerate()
        .map(|(j, a)| {
            let col = (0..n_cases).map(|k| vals[k * na + j]);
            match a {
                AttrModel::Cat { name, values, .. } => Column::new(
                    name.clone(),
                    Values::Cat {
                        codes: col.map(|v| v as u32).collect(),
                        dict: Arc::new(values.clone()),
                    },
                ),
                AttrModel::Num { name, integer, .. } => Column::new(
                    name.clone(),
                    if *integer {
                        Values::I64(col.map(|v| v as i64).collect())
                    } else {
                        Values::F64(col.collect())
                    },
                ),
                AttrModel::Bool { name, .. } => {
                    Column::new(name.clone(), Values::Bool(col.map(|v| v != 0.0).collect()))
                }
            }
        })
        .collect();
    let width = n_cases.to_string().len().max(6);
    let case_names: Vec<String> = (0..n_cases)
        .into_par_iter()
        .with_min_len(CHUNK)
        .map(|k| format!("{}{:0width$}", m.case_prefix, k + 1))
        .collect();

    let input = LogInput {
        case,
        case_names,
        activity,
        activity_names: m.acts.iter().map(|a| a.name.clone()).collect(),
        time,
        resource,
        lifecycle: lifecycle_col,
        event_attrs,
        case_attrs: CaseAttrs::PerCase(case_attrs),
        row: None,
    };
    let after_change = match change {
        Some(c) => arrivals.iter().map(|&t| t >= c).collect(),
        None => vec![false; n_cases],
    };
    let mut deviation_names = vec!["none".to_string()];
    deviation_names.extend(m.dev_names.iter().cloned());
    Ok(Simulation {
        input,
        truth: Truth {
            segment: seg,
            segment_names: m.seg_names.clone(),
            deviation: dev,
            deviation_names,
            change_time: change,
            after_change,
        },
    })
}

#[cfg(test)]
mod tests {
    use std::collections::HashMap;
    use std::time::Instant;

    use super::*;
    use crate::sim::{workshop_scenario, ProcessSpec};
    use crate::EventLog;

    /// One event as the tests see it: activity, time, lifecycle ("start"/"complete"), resource.
    #[derive(Debug, Clone, PartialEq)]
    struct Ev {
        act: String,
        t: i64,
        lc: String,
        res: Option<String>,
    }

    fn cases_of(input: &LogInput) -> Vec<Vec<Ev>> {
        let mut out = vec![Vec::new(); input.case_names.len()];
        for i in 0..input.case.len() {
            let lc = input
                .lifecycle
                .as_ref()
                .map_or("complete".to_string(), |c| c.values.text(i));
            let res = input
                .resource
                .as_ref()
                .filter(|c| c.is_valid(i))
                .map(|c| c.values.text(i));
            out[input.case[i] as usize].push(Ev {
                act: input.activity_names[input.activity[i] as usize].clone(),
                t: input.time[i],
                lc,
                res,
            });
        }
        out
    }

    fn run(spec: &ProcessSpec, n: usize, seed: u64) -> Simulation {
        simulate(spec, n, seed, &Control::new()).unwrap()
    }

    /// A small process using every node type; all pooled activities write start events.
    const SMALL: &str = r#"{
      "start": "2025-03-03T00:00:00Z",
      "arrival": {"mean": 4},
      "segments": [{"name": "a", "p": 0.5}, {"name": "b", "p": 0.3}, {"name": "c", "p": 0.2}],
      "case_attributes": [
        {"type": "numeric", "name": "size", "dist": {"dist": "uniform", "low": 0, "high": 10}},
        {"type": "bool", "name": "vip", "p": 0.1, "by_segment": {"c": 0.9}}
      ],
      "resources": [{"name": "desk", "capacity": 2}, {"name": "lab", "capacity": 3,
                     "hours": {"days": ["mon", "tue", "wed", "thu", "fri"], "from": 8, "to": 17}}],
      "activities": [
        {"name": "arrive", "duration": {"dist": "constant", "value": 0}},
        {"name": "open", "duration": {"dist": "exponential", "mean": 3}, "resource": "desk", "lifecycle": true},
        {"name": "x", "duration": {"dist": "lognormal", "mean": 20, "sd": 10}, "resource": "lab", "lifecycle": true},
        {"name": "y", "duration": {"dist": "normal", "mean": 15, "sd": 5}, "resource": "lab", "lifecycle": true},
        {"name": "z", "duration": {"dist": "triangular", "low": 1, "mode": 2, "high": 5}},
        {"name": "fix", "duration": {"dist": "uniform", "low": 5, "high": 10}, "resource": "desk", "lifecycle": true},
        {"name": "check", "duration": {"dist": "constant", "value": 2}, "resource": "desk", "lifecycle": true},
        {"name": "close", "duration": {"dist": "constant", "value": 1}, "resource": "desk", "lifecycle": true},
        {"name": "audit", "duration": {"dist": "constant", "value": 1}}
      ],
      "flow": {"sequence": [
        {"step": "arrive"},
        {"step": "open"},
        {"parallel": [{"step": "x"}, {"sequence": [{"step": "y"}, {"step": "z"}]}]},
        {"choice": [
          {"label": "big", "p": 0.2, "by_segment": {"b": 0.6},
           "by_attribute": [{"if": {"attr": "size", "ge": 9}, "p": 1.0}], "then": {"step": "fix"}},
          {"label": "small", "p": 0.8, "by_segment": {"b": 0.4},
           "by_attribute": [{"if": {"attr": "size", "ge": 9}, "p": 0.0}], "then": null}
        ]},
        {"loop": {"body": {"step": "check"}, "redo": {"step": "fix"}, "p_repeat": 0.2, "max": 2}},
        {"step": "close"}
      ]},
      "deviations": [
        {"kind": "skip", "step": "open", "rate": 0.05},
        {"kind": "swap", "first": "check", "second": "close", "rate": 0.05},
        {"kind": "repeat", "step": "open", "rate": 0.05}
      ],
      "drift": {"at": "2025-03-10T00:00:00Z", "choice_overrides": {"big": 0.0, "small": 1.0},
                "add_step_after": [{"after": "close", "step": "audit"}]},
      "event_attributes": [{"name": "cost", "dist": {"dist": "constant", "value": 1.5}}]
    }"#;

    fn small() -> ProcessSpec {
        ProcessSpec::from_json(SMALL).unwrap()
    }

    fn same_input(a: &LogInput, b: &LogInput) -> bool {
        a.case == b.case
            && a.case_names == b.case_names
            && a.activity == b.activity
            && a.time == b.time
            && a.resource == b.resource
            && a.lifecycle == b.lifecycle
            && a.event_attrs == b.event_attrs
            && format!("{:?}", a.case_attrs) == format!("{:?}", b.case_attrs)
    }

    #[test]
    fn deterministic_for_a_seed_and_any_thread_count() {
        let spec = small();
        let a = run(&spec, 9_000, 11);
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap();
        let b = pool.install(|| run(&spec, 9_000, 11));
        assert!(same_input(&a.input, &b.input));
        assert_eq!(a.truth, b.truth);
        let c = run(&spec, 9_000, 12);
        assert!(!same_input(&a.input, &c.input));
        assert_ne!(a.truth.segment, c.truth.segment);
    }

    #[test]
    fn output_builds_an_event_log() {
        let sim = run(&small(), 2_000, 3);
        let n = sim.input.case.len();
        let (log, rep) = EventLog::build(sim.input).unwrap();
        assert_eq!(log.n_events(), n);
        assert_eq!(rep.n_reordered, 0);
        assert_eq!(log.case_name(1999), "R002000");
        assert!(log.lifecycle().is_some());
        assert!(log.case_attr("vip").is_some());
        // "cost" is on complete events only.
        let cost = log.event_attr("cost").unwrap();
        let lc = log.lifecycle().unwrap();
        for i in 0..log.n_events() {
            assert_eq!(cost.is_valid(i), lc.values.text(i) == "complete");
        }
    }

    /// From the output only: per pool, the members used, and that a member never serves two
    /// activities at once (so at most `capacity` work in parallel).
    #[test]
    fn resource_capacity_is_never_exceeded() {
        let spec = small();
        let sim = run(&spec, 20_000, 5);
        let mut intervals: HashMap<String, Vec<(i64, i64)>> = HashMap::new();
        for evs in cases_of(&sim.input) {
            // Pair each start with the next complete of the same activity and member.
            let mut open: Vec<(String, Option<String>, i64)> = Vec::new();
            for e in evs {
                if e.lc == "start" {
                    open.push((e.act.clone(), e.res.clone(), e.t));
                } else if let Some(k) = open.iter().position(|o| o.0 == e.act && o.1 == e.res) {
                    let (_, r, s) = open.remove(k);
                    if let Some(r) = r {
                        intervals.entry(r).or_default().push((s, e.t));
                    }
                }
            }
            assert!(open.is_empty());
        }
        let mut per_pool: HashMap<String, usize> = HashMap::new();
        let mut sweep: HashMap<String, Vec<(i64, i32)>> = HashMap::new();
        for (member, mut iv) in intervals {
            iv.sort_unstable();
            for w in iv.windows(2) {
                assert!(w[0].1 <= w[1].0, "{member} overlaps: {:?} {:?}", w[0], w[1]);
            }
            let pool = member.rsplit_once('-').unwrap().0.to_string();
            *per_pool.entry(pool.clone()).or_default() += 1;
            let s = sweep.entry(pool).or_default();
            for (a, b) in iv {
                s.push((a, 1));
                s.push((b, -1));
            }
        }
        assert_eq!(per_pool["desk"], 2);
        assert_eq!(per_pool["lab"], 3);
        for (pool, mut s) in sweep {
            s.sort_unstable(); // ends (-1) before starts (+1) at equal times
            let mut busy = 0;
            let mut most = 0;
            for (_, d) in s {
                busy += d;
                most = most.max(busy);
            }
            let cap = if pool == "desk" { 2 } else { 3 };
            assert!(most <= cap, "{pool}: {most} busy");
            assert_eq!(most, cap, "{pool} never full: no queueing was exercised");
        }
    }

    #[test]
    fn events_follow_the_flow_order() {
        let sim = run(&small(), 5_000, 8);
        for (k, evs) in cases_of(&sim.input).iter().enumerate() {
            let first =
                |a: &str, lc: &str| evs.iter().find(|e| e.act == a && e.lc == lc).map(|e| e.t);
            let last = |a: &str, lc: &str| {
                evs.iter()
                    .rev()
                    .find(|e| e.act == a && e.lc == lc)
                    .map(|e| e.t)
            };
            assert_eq!(evs[0].act, "arrive", "case {k}");
            for w in evs.windows(2) {
                assert!(w[0].t <= w[1].t, "case {k}: events out of time order");
            }
            // Sequence: open before both parallel branches; join: check after x and after z.
            let x_end = last("x", "complete").unwrap();
            let z_end = last("z", "complete").unwrap();
            if let Some(o) = last("open", "complete") {
                assert!(o <= first("x", "start").unwrap() && o <= first("y", "start").unwrap());
            }
            assert!(first("y", "complete").unwrap() <= z_end);
            let dev = sim.truth.deviation[k];
            let check = first("check", "start").or(first("close", "start")).unwrap();
            assert!(
                x_end <= check && z_end <= check,
                "case {k}: join before all branches ended"
            );
            if dev != 2 {
                // Without the swap, close comes after every check.
                assert!(last("check", "complete").unwrap() <= first("close", "start").unwrap());
            }
            // Each start precedes its complete.
            for a in ["open", "x", "y", "fix", "check", "close"] {
                if let (Some(s), Some(c)) = (first(a, "start"), first(a, "complete")) {
                    assert!(s <= c);
                }
            }
        }
    }

    #[test]
    fn segment_shares_match_the_spec() {
        let spec = small();
        let n = 20_000;
        let sim = run(&spec, n, 21);
        for (s, seg) in spec.segments.iter().enumerate() {
            let count = sim
                .truth
                .segment
                .iter()
                .filter(|&&x| x as usize == s)
                .count() as f64;
            // Binomial(n, p): mean n p, sd sqrt(n p (1 - p)); allow 5 sd.
            let sd = (n as f64 * seg.p * (1.0 - seg.p)).sqrt();
            assert!(
                (count - n as f64 * seg.p).abs() < 5.0 * sd,
                "{}: {count}",
                seg.name
            );
        }
    }

    #[test]
    fn deviation_truth_matches_the_traces() {
        let sim = run(&small(), 20_000, 4);
        let names = &sim.truth.deviation_names;
        assert_eq!(
            names,
            &["none", "skip open", "swap check/close", "repeat open"]
        );
        let mut seen = [0usize; 4];
        for (k, evs) in cases_of(&sim.input).iter().enumerate() {
            let d = sim.truth.deviation[k] as usize;
            seen[d] += 1;
            let count = |a: &str| {
                evs.iter()
                    .filter(|e| e.act == a && e.lc == "complete")
                    .count()
            };
            let pos = |a: &str| evs.iter().position(|e| e.act == a && e.lc == "complete");
            let rpos = |a: &str| evs.iter().rposition(|e| e.act == a && e.lc == "complete");
            match d {
                0 => {
                    assert_eq!(count("open"), 1, "case {k}");
                    assert!(rpos("check") < pos("close"), "case {k}");
                }
                1 => assert_eq!(count("open"), 0, "case {k}"),
                2 => assert!(pos("close") < rpos("check"), "case {k}"),
                3 => assert_eq!(count("open"), 2, "case {k}"),
                _ => unreachable!(),
            }
        }
        for (d, &c) in seen.iter().enumerate().skip(1) {
            // Rate 5 % of 20 000 = 1000; sd ~ 31.
            assert!((c as f64 - 1000.0).abs() < 5.0 * 30.8, "{}: {c}", names[d]);
        }
    }

    #[test]
    fn drift_truth_matches_arrivals_and_behaviour() {
        let spec = small();
        let sim = run(&spec, 6_000, 9);
        let ct = sim.truth.change_time.unwrap();
        assert_eq!(ct, crate::sim::spec::parse_iso("2025-03-10").unwrap());
        let cases = cases_of(&sim.input);
        let mut n_after = 0;
        for (k, evs) in cases.iter().enumerate() {
            // "arrive" takes no time, so its event is the arrival.
            let arrival = evs[0].t;
            assert_eq!(sim.truth.after_change[k], arrival >= ct, "case {k}");
            let audit = evs.iter().any(|e| e.act == "audit");
            let fix = evs.iter().any(|e| e.act == "fix");
            if sim.truth.after_change[k] {
                n_after += 1;
                assert!(audit, "case {k}");
                // After the change no case takes the "big" branch; fix only comes via the loop.
                let checks = evs
                    .iter()
                    .filter(|e| e.act == "check" && e.lc == "complete")
                    .count();
                assert!(!fix || checks >= 2, "case {k}");
            } else {
                assert!(!audit, "case {k}");
            }
        }
        assert!(n_after > 1000 && n_after < 5000, "{n_after}");
    }

    /// The M/M/2 queue against the Erlang C formula (Erlang 1917; e.g. Kleinrock 1975,
    /// *Queueing Systems* vol. 1, eq. 3.40 \[mem\]): with arrival rate λ, service rate μ per
    /// server, c servers, a = λ/μ, ρ = a/c, P(wait) = (aᶜ/c!)/(1-ρ) / (Σ_{k<c} aᵏ/k! +
    /// (aᶜ/c!)/(1-ρ)) and the mean wait W_q = P(wait) / (cμ − λ). Here λ = 1/10, μ = 1/12, c = 2:
    /// a = 1.2, ρ = 0.6, P(wait) = 1.8/4.0 = 0.45, W_q = 0.45/(1/15) = 6.75 minutes
    /// \[calc: recomputed from the formula in Python\].
    #[test]
    fn mm2_waiting_matches_erlang_c() {
        let spec = ProcessSpec::from_json(
            r#"{
          "start": 0, "arrival": {"mean": 10},
          "resources": [{"name": "server", "capacity": 2}],
          "activities": [
            {"name": "arrive", "duration": {"dist": "constant", "value": 0}},
            {"name": "serve", "duration": {"dist": "exponential", "mean": 12}, "resource": "server", "lifecycle": true}
          ],
          "flow": {"sequence": [{"step": "arrive"}, {"step": "serve"}]}
        }"#,
        )
        .unwrap();
        let sim = run(&spec, 400_000, 2024);
        let waits: Vec<f64> = cases_of(&sim.input)
            .iter()
            .map(|e| (e[1].t - e[0].t) as f64 / 60e9)
            .collect();
        let n = waits.len() as f64;
        let mean = waits.iter().sum::<f64>() / n;
        let p_wait = waits.iter().filter(|&&w| w > 0.0).count() as f64 / n;
        // Standard error by batch means (waits are autocorrelated): 100 batches of 4 000.
        let bm: Vec<f64> = waits
            .chunks(4_000)
            .map(|c| c.iter().sum::<f64>() / c.len() as f64)
            .collect();
        let bmean = bm.iter().sum::<f64>() / bm.len() as f64;
        let var = bm.iter().map(|x| (x - bmean).powi(2)).sum::<f64>() / (bm.len() as f64 - 1.0);
        let se = (var / bm.len() as f64).sqrt();
        assert!((mean - 6.75).abs() < 5.0 * se, "mean wait {mean}, se {se}");
        assert!((p_wait - 0.45).abs() < 0.01, "P(wait) {p_wait}");
    }

    #[test]
    fn working_hours_hold_for_pooled_work() {
        let sim = run(&small(), 3_000, 1);
        for evs in cases_of(&sim.input) {
            for e in &evs {
                if e.lc == "start" && e.res.as_deref().is_some_and(|r| r.starts_with("lab")) {
                    let rel =
                        (e.t - super::super::compile::MONDAY_NS).rem_euclid(7 * 86_400_000_000_000);
                    let day = rel / 86_400_000_000_000;
                    let hour = (rel % 86_400_000_000_000) as f64 / 3.6e12;
                    assert!(
                        day < 5 && (8.0..17.0).contains(&hour),
                        "lab start at day {day} hour {hour}"
                    );
                }
            }
        }
    }

    #[test]
    fn cancellation_stops_the_run() {
        let ctl = Control::new();
        ctl.cancel();
        assert_eq!(
            simulate(&small(), 100, 1, &ctl).unwrap_err(),
            TmError::Interrupted
        );
        let ctl = Control::new();
        let _ = simulate(&small(), 100, 1, &ctl).unwrap();
        assert_eq!(ctl.progress(), (200, 200));
    }

    #[test]
    fn public_types_are_send_and_sync() {
        fn check<T: Send + Sync>() {}
        check::<Simulation>();
        check::<Truth>();
        check::<ProcessSpec>();
    }

    #[test]
    fn bad_arguments_are_errors() {
        assert!(matches!(
            simulate(&small(), 0, 1, &Control::new()),
            Err(TmError::Parameter { .. })
        ));
    }

    #[test]
    fn times_beyond_2262_are_a_limit_error() {
        let spec = |mean: f64, dur: f64| {
            ProcessSpec::from_json(&format!(
                r#"{{"start": "2025-01-06", "arrival": {{"mean": {mean}}},
                    "resources": [{{"name": "r", "capacity": 1,
                                   "hours": {{"days": ["mon"], "from": 8, "to": 9}}}}],
                    "activities": [{{"name": "a", "resource": "r",
                                    "duration": {{"dist": "constant", "value": {dur}}}}}],
                    "flow": {{"step": "a"}}}}"#
            ))
            .unwrap()
        };
        for (mean, dur) in [(1e9, 1.0), (1.0, 1e12), (1.0, 1e7)] {
            let e = simulate(&spec(mean, dur), 1_000, 1, &Control::new()).unwrap_err();
            assert!(matches!(e, TmError::Limit { .. }), "{e:?}");
        }
    }

    fn err_of(edit: impl Fn(&mut serde_json::Value)) -> String {
        let mut v: serde_json::Value = serde_json::from_str(SMALL).unwrap();
        edit(&mut v);
        let e = ProcessSpec::from_json(&v.to_string()).unwrap_err();
        assert!(
            matches!(e, TmError::Parameter { .. } | TmError::Schema { .. }),
            "{e:?}"
        );
        e.to_string()
    }

    #[test]
    fn bad_specs_name_the_json_path() {
        let m = err_of(|v| v["flow"]["sequence"][3]["choice"][1]["p"] = 1.5.into());
        assert!(
            m.starts_with("flow.sequence[3].choice[1].p must be in [0, 1]"),
            "{m}"
        );
        let m =
            err_of(|v| v["flow"]["sequence"][2]["parallel"][1]["sequence"][0]["step"] = "q".into());
        assert!(
            m.contains("flow.sequence[2].parallel[1].sequence[0].step: unknown activity \"q\""),
            "{m}"
        );
        let m = err_of(|v| v["segments"][0]["p"] = 0.9.into());
        assert!(m.contains("segments: the shares p must sum to 1"), "{m}");
        let m = err_of(|v| v["activities"][2]["duration"]["sd"] = (-1.0).into());
        assert!(m.contains("activities[2].duration.sd must be >= 0"), "{m}");
        let m = err_of(|v| v["activities"][1]["resource"] = "nobody".into());
        assert!(
            m.contains("activities[1].resource: unknown resource pool \"nobody\""),
            "{m}"
        );
        let m = err_of(|v| {
            v["flow"]["sequence"][3]["choice"][0]["by_segment"] = serde_json::json!({"zz": 0.1})
        });
        assert!(
            m.contains("flow.sequence[3].choice[0].by_segment.zz: unknown segment"),
            "{m}"
        );
        let m = err_of(|v| {
            v["flow"]["sequence"][3]["choice"][0]["by_attribute"][0]["if"]["attr"] = "vip".into()
        });
        assert!(
            m.contains("flow.sequence[3].choice[0].by_attribute[0].if.ge cannot test"),
            "{m}"
        );
        let m = err_of(|v| v["drift"]["choice_overrides"] = serde_json::json!({"huge": 0.5}));
        assert!(
            m.contains("drift.choice_overrides.huge: no choice branch has the label"),
            "{m}"
        );
        let m = err_of(|v| v["resources"][1]["hours"]["days"][2] = "wensday".into());
        assert!(
            m.contains("resources[1].hours.days[2] must be one of"),
            "{m}"
        );
        let m = err_of(|v| v["deviations"][0]["rate"] = 2.into());
        assert!(m.contains("deviations[0].rate must be in [0, 1]"), "{m}");
        let m = err_of(|v| v["start"] = "next tuesday".into());
        assert!(m.contains("start must be an ISO 8601 date-time"), "{m}");
        let m = err_of(|v| {
            v["flow"] = serde_json::json!({"choice": [{"p": 0.5, "then": {"step": "z"}}]});
            v.as_object_mut().unwrap().remove("drift");
        });
        assert!(
            m.contains("flow: a case can pass through the flow without any step"),
            "{m}"
        );
        // Structural errors: the path comes from the position serde reports.
        let m = err_of(|v| v["flow"]["sequence"][4]["loop"]["max"] = "many".into());
        assert!(
            m.contains("flow.sequence[4].loop") && m.contains("invalid type"),
            "{m}"
        );
        let m = err_of(|v| v["activities"][0]["colour"] = "red".into());
        assert!(m.contains("activities[0]") && m.contains("colour"), "{m}");
    }

    #[test]
    fn spec_round_trips_through_json() {
        let s = small();
        let back = ProcessSpec::from_json(&s.to_json().unwrap()).unwrap();
        assert_eq!(s, back);
        // Same spec, same simulation.
        assert_eq!(run(&s, 500, 1).truth, run(&back, 500, 1).truth);
    }

    /// CPU seconds used by this process so far (Linux; 0 elsewhere).
    fn cpu_seconds() -> f64 {
        let st = std::fs::read_to_string("/proc/self/stat").unwrap_or_default();
        let f: Vec<&str> = st
            .rsplit_once(')')
            .map_or("", |x| x.1)
            .split_whitespace()
            .collect();
        let tick = |i: usize| f.get(i).and_then(|x| x.parse::<f64>().ok()).unwrap_or(0.0);
        (tick(11) + tick(12)) / 100.0
    }

    /// Speed: `cargo test --release -- --ignored --nocapture sim_speed`.
    #[test]
    #[ignore]
    fn sim_speed_one_million_cases() {
        let spec = workshop_scenario();
        let t0 = Instant::now();
        let c0 = cpu_seconds();
        let sim = simulate(&spec, 1_000_000, 1, &Control::new()).unwrap();
        let dt = t0.elapsed().as_secs_f64();
        let cpu = cpu_seconds() - c0;
        let n = sim.input.case.len();
        println!(
            "simulated 1 000 000 cases, {n} events in {dt:.2} s wall, {cpu:.2} s CPU ({:.1} M events/s, {} threads)",
            n as f64 / dt / 1e6,
            rayon::current_num_threads()
        );
        let t1 = Instant::now();
        let (log, _) = EventLog::build(sim.input).unwrap();
        println!(
            "EventLog::build: {:.2} s, {} cases",
            t1.elapsed().as_secs_f64(),
            log.n_cases()
        );
    }
}
