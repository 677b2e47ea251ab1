//! Inductive discovery (Leemans, Fahland & van der Aalst 2013, "Discovering block-structured
//! process models from event logs - a constructive approach", Petri Nets, LNCS 7927) and its
//! infrequent-behaviour variant IMf (same authors, "... from event logs containing infrequent
//! behaviour", BPM 2013 Workshops, LNBIP 171).
//!
//! The method is a divide-and-conquer over the log:
//! 1. *base cases*: a log of only empty traces gives a silent step; a log of only `⟨a⟩` gives
//!    `a`; empty traces next to others give `choice(tau, ...)` of the rest;
//! 2. *cuts*: find a partition of the activities in the directly-follows graph that matches an
//!    operator (exclusive choice, sequence, parallel, loop; see [`cuts`]), split the log into
//!    one sublog per part, and recurse;
//! 3. *fall-throughs* when no cut fits (see [`fallthrough`]).
//!
//! The result is a process tree, hence (see [`crate::discover::tree`]) a sound workflow net,
//! whose language contains every trace of the log (fitness 1, Theorem in the 2013 paper); if the
//! log is directly-follows complete and comes from a tree of the class the paper describes
//! (no duplicate labels, no silent steps except where needed, ...), the discovered tree has the
//! same language (rediscoverability).
//!
//! **IMf** (noise threshold `f` in [0, 1]): edges `a -> b` with `|a>b|` below `f` times the
//! strongest outgoing edge of `a` are dropped (likewise rare start and end activities). Each
//! recursion first looks for a cut on the unfiltered graph, as IM does, and filters only when
//! none is found (our reading of the method, from memory). Filtering first would drop the rare
//! edge into an infrequent branch (e.g. `inspect -> quote` in 4 % of cases) and leave that branch
//! unreachable, which breaks the sequence cut above it. Splitting then removes the
//! events that do not fit the cut: a trace touching several choice parts goes to the one holding
//! most of its events; a sequence split keeps the most events in order (dynamic programming);
//! empty traces amounting to less than `f` of a sublog are dropped. With `f = 0` this is IM.
//!
//! The recursion runs on variants (distinct traces with counts), so its cost depends on the
//! number and length of variants, not on the number of cases.

pub mod cuts;
pub mod fallthrough;

use std::collections::HashMap;

use crate::control::Control;
use crate::discover::tree::{NodeKind, ProcessTree, Tree};
use crate::error::{TmError, TmResult};
use crate::log::EventLog;
use cuts::{loop_cut, parallel_cut, sequence_cut, xor_cut, LocalDfg};

/// A sublog: distinct traces (global activity codes) with their counts.
pub type SubLog = Vec<(Vec<u32>, u64)>;

/// Parameters of inductive discovery.
#[derive(Debug, Clone, PartialEq)]
pub struct InductiveParams {
    /// IMf noise threshold in [0, 1] (default 0.0, plain IM).
    pub noise_threshold: f64,
}

impl Default for InductiveParams {
    fn default() -> Self {
        InductiveParams {
            noise_threshold: 0.0,
        }
    }
}

/// Check the noise threshold.
pub fn check_noise(f: f64) -> TmResult<()> {
    if !(0.0..=1.0).contains(&f) {
        return Err(TmError::param(
            "noise_threshold",
            format!("noise_threshold must be in [0, 1]; got {f}"),
        ));
    }
    Ok(())
}

#[derive(Clone, Copy)]
enum Cut {
    Xor,
    Seq,
    Par,
    Loop,
}

fn dedupe(log: SubLog) -> SubLog {
    let mut m: HashMap<Vec<u32>, u64> = HashMap::with_capacity(log.len());
    let mut order: Vec<Vec<u32>> = Vec::new();
    for (t, c) in log {
        match m.get_mut(&t) {
            Some(x) => *x += c,
            None => {
                order.push(t.clone());
                m.insert(t, c);
            }
        }
    }
    order
        .into_iter()
        .map(|t| {
            let c = m.get(&t).copied().unwrap_or(0);
            (t, c)
        })
        .collect()
}

struct Miner<'a> {
    f: f64,
    n_global: usize,
    names: &'a [String],
    ctl: &'a Control,
}

impl Miner<'_> {
    fn mine(&self, log: SubLog, depth: usize) -> TmResult<Tree> {
        self.ctl.check()?;
        if depth > 10_000 {
            return Err(TmError::Internal {
                message: "inductive discovery recursed too deeply".into(),
            });
        }
        let total: u64 = log.iter().map(|x| x.1).sum();
        if total == 0 {
            return Ok(Tree::Tau);
        }
        let empty: u64 = log.iter().filter(|x| x.0.is_empty()).map(|x| x.1).sum();
        if empty == total {
            return Ok(Tree::Tau);
        }
        if empty > 0 {
            let rest: SubLog = log.into_iter().filter(|x| !x.0.is_empty()).collect();
            if (empty as f64) < self.f * total as f64 {
                return self.mine(rest, depth + 1);
            }
            let sub = self.mine(rest, depth + 1)?;
            return Ok(Tree::Op(NodeKind::Choice, vec![Tree::Tau, sub]));
        }
        let g = LocalDfg::new(&log, self.n_global);
        if g.n() == 1 {
            let a = g.acts[0];
            let act = Tree::Act(self.names[a as usize].clone());
            let single: u64 = log.iter().filter(|x| x.0.len() == 1).map(|x| x.1).sum();
            if single == total || (self.f > 0.0 && single as f64 >= (1.0 - self.f) * total as f64) {
                return Ok(act);
            }
            return Ok(Tree::Op(NodeKind::Loop, vec![act, Tree::Tau]));
        }
        if let Some((cut, parts)) = find_cut(&g) {
            return self.apply(cut, &parts, &g, &log, depth);
        }
        if self.f > 0.0 {
            let h = g.filtered(self.f);
            if let Some((cut, parts)) = find_cut(&h) {
                return self.apply(cut, &parts, &h, &log, depth);
            }
        }
        self.fall_through(log, &g, depth)
    }

    fn apply(
        &self,
        cut: Cut,
        parts: &[Vec<usize>],
        g: &LocalDfg,
        log: &SubLog,
        depth: usize,
    ) -> TmResult<Tree> {
        let mut part_of = vec![usize::MAX; self.n_global];
        for (i, p) in parts.iter().enumerate() {
            for &x in p {
                part_of[g.acts[x] as usize] = i;
            }
        }
        let k = parts.len();
        let subs = match cut {
            Cut::Xor => split_xor(log, &part_of, k),
            Cut::Seq => split_seq(log, &part_of, k),
            Cut::Par => split_par(log, &part_of, k),
            Cut::Loop => split_loop(log, &part_of, k),
        };
        let kind = match cut {
            Cut::Xor => NodeKind::Choice,
            Cut::Seq => NodeKind::Sequence,
            Cut::Par => NodeKind::Parallel,
            Cut::Loop => NodeKind::Loop,
        };
        let children = subs
            .into_iter()
            .map(|s| self.mine(dedupe(s), depth + 1))
            .collect::<TmResult<Vec<_>>>()?;
        Ok(Tree::Op(kind, children))
    }

    fn fall_through(&self, log: SubLog, g: &LocalDfg, depth: usize) -> TmResult<Tree> {
        use fallthrough::*;
        if let Some(a) = once_per_trace(&log, g) {
            let rest = dedupe(remove_activity(&log, a));
            let sub = self.mine(rest, depth + 1)?;
            return Ok(Tree::Op(
                NodeKind::Parallel,
                vec![Tree::Act(self.names[a as usize].clone()), sub],
            ));
        }
        if let Some(a) = concurrent_activity(&log, g, self.n_global) {
            let (lo, hi) = occurrence_range(&log, a);
            let act = Tree::Act(self.names[a as usize].clone());
            let leaf = match (lo, hi) {
                (1, 1) => act,
                (0, 1) => Tree::Op(NodeKind::Choice, vec![act, Tree::Tau]),
                (0, _) => Tree::Op(NodeKind::Loop, vec![Tree::Tau, act]),
                _ => Tree::Op(NodeKind::Loop, vec![act, Tree::Tau]),
            };
            let rest = dedupe(remove_activity(&log, a));
            let sub = self.mine(rest, depth + 1)?;
            return Ok(Tree::Op(NodeKind::Parallel, vec![leaf, sub]));
        }
        if let Some(split) = strict_tau_loop(&log, g) {
            let sub = self.mine(dedupe(split), depth + 1)?;
            return Ok(Tree::Op(NodeKind::Loop, vec![sub, Tree::Tau]));
        }
        if let Some(split) = tau_loop(&log, g) {
            let sub = self.mine(dedupe(split), depth + 1)?;
            return Ok(Tree::Op(NodeKind::Loop, vec![sub, Tree::Tau]));
        }
        let mut ch = vec![Tree::Tau];
        ch.extend(
            g.acts
                .iter()
                .map(|&a| Tree::Act(self.names[a as usize].clone())),
        );
        Ok(Tree::Op(NodeKind::Loop, ch))
    }
}

fn find_cut(g: &LocalDfg) -> Option<(Cut, Vec<Vec<usize>>)> {
    if let Some(p) = xor_cut(g) {
        return Some((Cut::Xor, p));
    }
    if let Some(p) = sequence_cut(g) {
        return Some((Cut::Seq, p));
    }
    if let Some(p) = parallel_cut(g) {
        return Some((Cut::Par, p));
    }
    loop_cut(g).map(|p| (Cut::Loop, p))
}

fn split_xor(log: &SubLog, part_of: &[usize], k: usize) -> Vec<SubLog> {
    let mut out = vec![Vec::new(); k];
    for (t, c) in log {
        let mut votes = vec![0usize; k];
        for &a in t {
            votes[part_of[a as usize]] += 1;
        }
        // Most events; ties go to the lower part.
        let best = (0..k)
            .max_by_key(|&i| (votes[i], std::cmp::Reverse(i)))
            .unwrap_or(0);
        let kept: Vec<u32> = t
            .iter()
            .copied()
            .filter(|&a| part_of[a as usize] == best)
            .collect();
        out[best].push((kept, *c));
    }
    out
}

fn split_par(log: &SubLog, part_of: &[usize], k: usize) -> Vec<SubLog> {
    let mut out = vec![Vec::new(); k];
    for (t, c) in log {
        for (i, o) in out.iter_mut().enumerate() {
            o.push((
                t.iter()
                    .copied()
                    .filter(|&a| part_of[a as usize] == i)
                    .collect(),
                *c,
            ));
        }
    }
    out
}

fn split_seq(log: &SubLog, part_of: &[usize], k: usize) -> Vec<SubLog> {
    let mut out = vec![Vec::new(); k];
    for (t, c) in log {
        let n = t.len();
        // prefix[i][j]: events of part i among the first j events.
        let mut prefix = vec![vec![0i64; n + 1]; k];
        for (j, &a) in t.iter().enumerate() {
            for (i, row) in prefix.iter_mut().enumerate() {
                row[j + 1] = row[j] + i64::from(part_of[a as usize] == i);
            }
        }
        // best[i][j]: most events kept when parts 0..=i cover the first j events; part i covers
        // events arg[i][j]..j.
        let mut best = vec![vec![0i64; n + 1]; k];
        let mut arg = vec![vec![0usize; n + 1]; k];
        best[0].copy_from_slice(&prefix[0]);
        for i in 1..k {
            let mut run_max = i64::MIN;
            let mut run_arg = 0usize;
            for j in 0..=n {
                let cand = best[i - 1][j] - prefix[i][j];
                if cand > run_max {
                    run_max = cand;
                    run_arg = j;
                }
                best[i][j] = prefix[i][j] + run_max;
                arg[i][j] = run_arg;
            }
        }
        let mut bounds = vec![0usize; k + 1];
        bounds[k] = n;
        let mut j = n;
        for i in (1..k).rev() {
            j = arg[i][j];
            bounds[i] = j;
        }
        for (i, o) in out.iter_mut().enumerate() {
            let seg: Vec<u32> = t[bounds[i]..bounds[i + 1]]
                .iter()
                .copied()
                .filter(|&a| part_of[a as usize] == i)
                .collect();
            o.push((seg, *c));
        }
    }
    out
}

fn split_loop(log: &SubLog, part_of: &[usize], k: usize) -> Vec<SubLog> {
    let mut out = vec![Vec::new(); k];
    for (t, c) in log {
        let mut cur: Vec<u32> = Vec::new();
        let mut cur_part = 0usize;
        for &a in t {
            let p = part_of[a as usize];
            if p != cur_part {
                // Close the current segment; keep body/redo alternating.
                out[cur_part].push((std::mem::take(&mut cur), *c));
                if cur_part != 0 && p != 0 {
                    out[0].push((Vec::new(), *c));
                }
                cur_part = p;
            }
            cur.push(a);
        }
        out[cur_part].push((cur, *c));
        if cur_part != 0 {
            out[0].push((Vec::new(), *c));
        }
    }
    out
}

/// Run inductive discovery on the variants of `log`.
pub fn inductive_tree(log: &EventLog, p: &InductiveParams, ctl: &Control) -> TmResult<ProcessTree> {
    check_noise(p.noise_threshold)?;
    if log.n_cases() == 0 {
        return Err(TmError::data(
            "the event log is empty: inductive discovery needs at least one case",
        ));
    }
    let vars = log.variants();
    let sub: SubLog = (0..vars.len())
        .map(|v| (vars.sequence(v).to_vec(), vars.counts[v]))
        .collect();
    inductive_on(sub, log.activity_names(), p, ctl)
}

/// Run inductive discovery on an explicit sublog.
pub fn inductive_on(
    sub: SubLog,
    names: &[String],
    p: &InductiveParams,
    ctl: &Control,
) -> TmResult<ProcessTree> {
    check_noise(p.noise_threshold)?;
    let m = Miner {
        f: p.noise_threshold,
        n_global: names.len(),
        names,
        ctl,
    };
    let t = m.mine(sub, 0)?.simplify();
    Ok(ProcessTree::from_tree(&t))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::testlog::{log_of, running_example};

    fn mine(log: &EventLog, f: f64) -> String {
        inductive_tree(
            log,
            &InductiveParams { noise_threshold: f },
            &Control::new(),
        )
        .unwrap()
        .to_string()
    }

    #[test]
    fn running_example_tree() {
        // The tree derived from the cut definitions of Leemans et al. 2013 on the running
        // example of REFERENCES section G (our derivation).
        assert_eq!(
            mine(&running_example(), 0.0),
            "sequence('a', parallel('b', 'c'), choice('d', 'e'), 'f')"
        );
    }

    #[test]
    fn loop_and_optional() {
        let log = log_of(&[
            (&["a", "b", "c", "b", "d"], 3),
            (&["a", "b", "d"], 3),
            (&["a", "d"], 1),
        ]);
        assert_eq!(
            mine(&log, 0.0),
            "sequence('a', choice(tau, loop('b', 'c')), 'd')"
        );
    }

    #[test]
    fn noise_filtered() {
        // A rare skip of `b`: IM keeps it as an optional step, IMf at 0.2 filters it out (the
        // edge a -> c is below 0.2 x 100 and the 2 empty traces are below 0.2 of the sublog).
        let log = log_of(&[(&["a", "b", "c"], 100), (&["a", "c"], 2)]);
        assert_eq!(mine(&log, 0.0), "sequence('a', choice(tau, 'b'), 'c')");
        assert_eq!(mine(&log, 0.2), "sequence('a', 'b', 'c')");
        // The filter is relative to the strongest outgoing edge of each activity: c's only
        // outgoing edge survives however rare, so b and c stay parallel.
        let log = log_of(&[(&["a", "b", "c"], 100), (&["a", "c", "b"], 1)]);
        assert_eq!(mine(&log, 0.2), "sequence('a', parallel('b', 'c'))");
    }

    #[test]
    fn optional_branch_against_a_chain() {
        // `f` is exclusive with the whole chain `q a b`: the sequence cut must put them in one
        // part (pairwise-unreachable activities share a part; Leemans et al. 2013), then the
        // choice cut separates them.
        let log = log_of(&[
            (&["r", "i", "f", "n"], 2),
            (&["r", "i", "q", "a", "b", "n"], 2),
        ]);
        assert_eq!(
            mine(&log, 0.0),
            "sequence('r', 'i', choice('f', sequence('q', 'a', 'b')), 'n')"
        );
    }

    #[test]
    fn noise_threshold_checked() {
        let log = running_example();
        let r = inductive_tree(
            &log,
            &InductiveParams {
                noise_threshold: 1.5,
            },
            &Control::new(),
        );
        assert!(matches!(r, Err(TmError::Parameter { .. })));
    }

    #[test]
    fn flower_when_nothing_fits() {
        let log = log_of(&[
            (&["a", "b", "a", "c"], 1),
            (&["c", "a", "b"], 1),
            (&["b", "c", "c"], 1),
        ]);
        let t = mine(&log, 0.0);
        assert!(t.contains("loop"), "{t}");
    }
}
