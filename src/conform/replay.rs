//! Token-based replay (Rozinat & van der Aalst 2008, "Conformance checking of processes based
//! on monitoring real behavior", Information Systems 33(1):64-95).
//!
//! A trace is replayed on the net from its initial marking, counting four kinds of tokens:
//! *produced* `p` (the initial tokens count as produced), *consumed* `c` (the final marking is
//! consumed at the end), *missing* `m` (tokens that had to be created because an event's
//! transition was not enabled) and *remaining* `r` (tokens left after consuming the final
//! marking). Fitness of a trace, or of the log with every counter summed over traces times their
//! frequency, is
//!
//! `fitness = 1/2 (1 - m / c) + 1/2 (1 - r / p)`.
//!
//! Choices the paper leaves to an implementation, and ours:
//! * *silent transitions*: before giving up on an event whose transition is not enabled, we
//!   search the shortest sequence of silent transitions (breadth-first over markings, at most
//!   `max_silent_states` markings) that enables it and fire that sequence; at the end of the
//!   trace we likewise search silent firings that reach a marking covering the final marking;
//! * *several transitions with one label*: an enabled one (lowest index), else one reachable by
//!   silent steps, else the one needing fewest missing tokens;
//! * *events whose activity no transition carries*: counted as `unmatched` and replayed as a
//!   virtual transition with an unmarked input and an unused output place (one missing, one
//!   remaining, one produced, one consumed token), so they lower fitness instead of being skipped.
//!
//! Replay runs once per variant (in parallel) and is multiplied by the variant's frequency. The
//! net must be bounded: a Karp-Miller coverability check (bounded budget) runs first and an
//! unbounded place is reported as an error.

use std::collections::{HashMap, VecDeque};

use rayon::prelude::*;

use crate::control::Control;
use crate::discover::petri::{coverability, Boundedness, CompiledNet, PetriNet};
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Parameters of token-based replay.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplayParams {
    /// Markings explored in one search for silent firings (default 10 000).
    pub max_silent_states: usize,
    /// Markings explored by the boundedness check before it gives up (default 20 000).
    pub boundedness_budget: usize,
}

impl Default for ReplayParams {
    fn default() -> Self {
        ReplayParams {
            max_silent_states: 10_000,
            boundedness_budget: 20_000,
        }
    }
}

/// Token counts of one trace.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TraceReplay {
    /// Produced tokens (including the initial marking).
    pub produced: u64,
    /// Consumed tokens (including the final marking).
    pub consumed: u64,
    /// Missing tokens.
    pub missing: u64,
    /// Remaining tokens.
    pub remaining: u64,
    /// Events whose activity no transition carries.
    pub unmatched: u64,
    /// `(transition, missing tokens)` for every firing that lacked tokens, in trace order.
    pub lacking: Vec<(u32, u32)>,
    /// Remaining tokens per place at the end, `(place, tokens)`.
    pub left: Vec<(u32, u32)>,
}

impl TraceReplay {
    /// `1/2 (1 - m/c) + 1/2 (1 - r/p)`.
    pub fn fitness(&self) -> f64 {
        fitness(self.produced, self.consumed, self.missing, self.remaining)
    }
}

/// The replay fitness formula (terms with a zero denominator count as 1).
pub fn fitness(p: u64, c: u64, m: u64, r: u64) -> f64 {
    let a = if c == 0 {
        1.0
    } else {
        1.0 - m as f64 / c as f64
    };
    let b = if p == 0 {
        1.0
    } else {
        1.0 - r as f64 / p as f64
    };
    0.5 * a + 0.5 * b
}

/// Replay of a whole log.
#[derive(Debug, Clone, PartialEq)]
pub struct LogReplay {
    /// One result per variant of the log (variant order of [`EventLog::variants`]).
    pub variants: Vec<TraceReplay>,
    /// Variant of each case.
    pub case_variant: Vec<u32>,
    /// Frequency of each variant.
    pub counts: Vec<u64>,
    /// Log-level counters `(p, c, m, r)`, weighted by frequency.
    pub totals: (u64, u64, u64, u64),
    /// Log-level fitness.
    pub fitness: f64,
}

/// Check that replay can run on this net: markings present and no unbounded place.
pub fn check_bounded(net: &PetriNet, cn: &CompiledNet, budget: usize) -> TmResult<()> {
    if let Boundedness::Unbounded(p) = coverability(cn, budget) {
        return Err(TmError::data(format!(
            "the Petri net is unbounded: place '{}' can collect arbitrarily many tokens \
             (Karp-Miller coverability check); replay and alignments need a bounded net",
            net.places[p]
        )));
    }
    Ok(())
}

/// Shortest sequence of silent transitions from `m` to a marking satisfying `goal`; `None` if
/// none exists within `budget` markings. Returns the transitions in firing order.
pub fn silent_path(
    cn: &CompiledNet,
    m: &[u32],
    budget: usize,
    goal: impl Fn(&[u32]) -> bool,
) -> Option<Vec<u32>> {
    if cn.silent_ids.is_empty() {
        return None;
    }
    let mut parent: Vec<(usize, u32)> = vec![(usize::MAX, 0)];
    let mut marks: Vec<Vec<u32>> = vec![m.to_vec()];
    let mut seen: HashMap<Vec<u32>, ()> = HashMap::new();
    seen.insert(m.to_vec(), ());
    let mut q = VecDeque::from([0usize]);
    while let Some(x) = q.pop_front() {
        for &t in &cn.silent_ids {
            if !cn.enabled(&marks[x], t as usize) {
                continue;
            }
            let mut nm = marks[x].clone();
            cn.fire(&mut nm, t as usize);
            if seen.contains_key(&nm) {
                continue;
            }
            let done = goal(&nm);
            seen.insert(nm.clone(), ());
            marks.push(nm);
            parent.push((x, t));
            let id = marks.len() - 1;
            if done {
                let mut path = Vec::new();
                let mut y = id;
                while parent[y].0 != usize::MAX {
                    path.push(parent[y].1);
                    y = parent[y].0;
                }
                path.reverse();
                return Some(path);
            }
            if marks.len() >= budget {
                return None;
            }
            q.push_back(id);
        }
    }
    None
}

/// Token counter state shared by replay and precision.
pub struct Replayer<'a> {
    /// The compiled net.
    pub cn: &'a CompiledNet,
    /// Silent search budget.
    pub budget: usize,
}

impl Replayer<'_> {
    fn fire_counted(&self, m: &mut [u32], t: usize, r: &mut TraceReplay) {
        let mut lack = 0u32;
        for &(p, w) in &self.cn.pre[t] {
            let have = m[p as usize];
            if have < w {
                lack += w - have;
                m[p as usize] = w;
            }
            r.consumed += u64::from(w);
        }
        if lack > 0 {
            r.missing += u64::from(lack);
            r.lacking.push((t as u32, lack));
        }
        for &(_, w) in &self.cn.post[t] {
            r.produced += u64::from(w);
        }
        self.cn.fire(m, t);
    }

    /// Replay one event of activity `a` from marking `m`.
    pub fn step(&self, m: &mut [u32], a: u32, r: &mut TraceReplay) {
        let ts = &self.cn.by_activity[a as usize];
        if ts.is_empty() {
            r.unmatched += 1;
            r.produced += 1;
            r.consumed += 1;
            r.missing += 1;
            r.remaining += 1;
            return;
        }
        if let Some(&t) = ts.iter().find(|&&t| self.cn.enabled(m, t as usize)) {
            self.fire_counted(m, t as usize, r);
            return;
        }
        if let Some(path) = silent_path(self.cn, m, self.budget, |x| {
            ts.iter().any(|&t| self.cn.enabled(x, t as usize))
        }) {
            for s in path {
                self.fire_counted(m, s as usize, r);
            }
            if let Some(&t) = ts.iter().find(|&&t| self.cn.enabled(m, t as usize)) {
                self.fire_counted(m, t as usize, r);
                return;
            }
        }
        let lack = |t: u32| -> u32 {
            self.cn.pre[t as usize]
                .iter()
                .map(|&(p, w)| w.saturating_sub(m[p as usize]))
                .sum()
        };
        let t = ts
            .iter()
            .copied()
            .min_by_key(|&t| (lack(t), t))
            .unwrap_or(ts[0]);
        self.fire_counted(m, t as usize, r);
    }

    /// Finish a trace: silent steps towards the final marking, consume it, count the rest.
    pub fn finish(&self, m: &mut [u32], r: &mut TraceReplay) {
        let fin = &self.cn.final_marking;
        let covers = |x: &[u32]| x.iter().zip(fin).all(|(a, b)| a >= b);
        if !covers(m) {
            if let Some(path) = silent_path(self.cn, m, self.budget, covers) {
                for s in path {
                    self.fire_counted(m, s as usize, r);
                }
            }
        }
        for (p, &f) in fin.iter().enumerate() {
            r.consumed += u64::from(f);
            if m[p] < f {
                r.missing += u64::from(f - m[p]);
                m[p] = 0;
            } else {
                m[p] -= f;
            }
        }
        for (p, &k) in m.iter().enumerate() {
            if k > 0 {
                r.remaining += u64::from(k);
                r.left.push((p as u32, k));
            }
        }
    }

    /// Replay a whole trace.
    pub fn trace(&self, t: &[u32]) -> TraceReplay {
        let mut r = TraceReplay {
            produced: self.cn.initial.iter().map(|&x| u64::from(x)).sum(),
            ..Default::default()
        };
        let mut m = self.cn.initial.clone();
        for &a in t {
            self.step(&mut m, a, &mut r);
        }
        self.finish(&mut m, &mut r);
        r
    }
}

/// Replay every variant of `log` on `net`.
pub fn replay_log(
    net: &PetriNet,
    log: &EventLog,
    p: &ReplayParams,
    ctl: &Control,
) -> TmResult<LogReplay> {
    if log.n_cases() == 0 {
        return Err(TmError::data("the event log is empty: nothing to replay"));
    }
    if p.max_silent_states == 0 {
        return Err(TmError::param(
            "max_silent_states",
            "max_silent_states must be at least 1",
        ));
    }
    let cn = CompiledNet::new(net, log.activity_names())?;
    check_bounded(net, &cn, p.boundedness_budget)?;
    let vars = log.variants();
    ctl.set_total(vars.len() as u64);
    let rp = Replayer {
        cn: &cn,
        budget: p.max_silent_states,
    };
    let results: Vec<TraceReplay> = (0..vars.len())
        .into_par_iter()
        .with_min_len(64)
        .map(|v| {
            if v % 1024 == 0 {
                ctl.check()?;
                ctl.advance(1024);
            }
            Ok(rp.trace(vars.sequence(v)))
        })
        .collect::<TmResult<Vec<_>>>()?;
    let mut tot = (0u64, 0u64, 0u64, 0u64);
    for (r, &n) in results.iter().zip(&vars.counts) {
        tot.0 += n * r.produced;
        tot.1 += n * r.consumed;
        tot.2 += n * r.missing;
        tot.3 += n * r.remaining;
    }
    Ok(LogReplay {
        fitness: fitness(tot.0, tot.1, tot.2, tot.3),
        variants: results,
        case_variant: vars.case_variant.clone(),
        counts: vars.counts.clone(),
        totals: tot,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::alpha::alpha_net;
    use crate::discover::testlog::{log_of, running_example};
    use approx::assert_relative_eq;

    fn one(net: &PetriNet, trace: &[&str]) -> TraceReplay {
        let log = log_of(&[(trace, 1)]);
        replay_log(net, &log, &ReplayParams::default(), &Control::new())
            .unwrap()
            .variants[0]
            .clone()
    }

    #[test]
    fn counters_on_alpha_net_of_running_example() {
        // Counters derived from the definition of Rozinat & van der Aalst 2008 on the alpha net
        // of the running example (REFERENCES section G; our numbers).
        let net = alpha_net(&running_example(), 100_000).unwrap();
        let cases: [(&[&str], (u64, u64, u64, u64), f64); 5] = [
            (&["a", "b", "c", "d", "f"], (7, 7, 0, 0), 1.0),
            (&["a", "b", "d", "f"], (6, 6, 1, 1), 0.833333),
            (&["a", "c", "b", "d", "e", "f"], (8, 9, 2, 1), 0.826389),
            (&["a", "b", "c", "f"], (6, 5, 1, 2), 0.733333),
            (&["a", "f"], (4, 3, 1, 2), 0.583333),
        ];
        for (t, (p, c, m, r), f) in cases {
            let x = one(&net, t);
            assert_eq!(
                (x.produced, x.consumed, x.missing, x.remaining),
                (p, c, m, r),
                "{t:?}"
            );
            assert_relative_eq!(x.fitness(), f, epsilon = 1e-6);
        }
        let log = log_of(&[(&["a", "b", "c", "d", "f"], 8), (&["a", "b", "d", "f"], 2)]);
        let r = replay_log(&net, &log, &ReplayParams::default(), &Control::new()).unwrap();
        assert_relative_eq!(r.fitness, 0.970588, epsilon = 1e-6);
    }

    #[test]
    fn unknown_activity_is_unmatched_not_error() {
        let net = alpha_net(&running_example(), 100_000).unwrap();
        let x = one(&net, &["a", "zzz", "b", "c", "d", "f"]);
        assert_eq!(x.unmatched, 1);
        assert!(x.fitness() < 1.0);
    }

    #[test]
    fn unbounded_net_reported() {
        let mut net = alpha_net(&running_example(), 100_000).unwrap();
        let q = net.add_place("pile");
        let t = net.add_transition("pump", None);
        net.arc_in(0, t);
        net.arc_out(t, 0);
        net.arc_out(t, q);
        let e = replay_log(
            &net,
            &running_example(),
            &ReplayParams::default(),
            &Control::new(),
        )
        .unwrap_err();
        assert!(
            e.to_string().contains("unbounded") && e.to_string().contains("pile"),
            "{e}"
        );
    }

    #[test]
    fn silent_steps_used() {
        use crate::discover::tree::{NodeKind, ProcessTree, Tree};
        let t = Tree::Op(
            NodeKind::Sequence,
            vec![
                Tree::Act("a".into()),
                Tree::Op(
                    NodeKind::Parallel,
                    vec![Tree::Act("b".into()), Tree::Act("c".into())],
                ),
                Tree::Op(NodeKind::Loop, vec![Tree::Act("d".into()), Tree::Tau]),
            ],
        );
        let net = ProcessTree::from_tree(&t).to_petri_net();
        for tr in [&["a", "c", "b", "d", "d"][..], &["a", "b", "c", "d"]] {
            let x = one(&net, tr);
            assert_eq!((x.missing, x.remaining), (0, 0), "{tr:?}");
        }
    }
}
