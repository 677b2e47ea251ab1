//! Precision by escaping edges (ETC; Muñoz-Gama & Carmona 2010, "A fresh look at precision in
//! process conformance", BPM, LNCS 6336, 211-226) and a simplicity measure.
//!
//! For every prefix `s` of a trace that is followed by at least one more event, the *state* of
//! the model after `s` allows a set `AT(s)` of activities (the labels of visible transitions
//! enabled there, also through silent steps). The log shows which activities followed `s`;
//! the allowed-but-never-seen ones are the *escaping edges* `EE(s)`. With `ω(s)` the number of
//! cases passing through `s`:
//!
//! `etc_p = 1 - Σ_s ω(s) |EE(s)| / Σ_s ω(s) |AT(s)|`.
//!
//! States are taken before each event (the state after the last event is not counted). The
//! model state after a prefix is the marking reached by token replay (see [`super::replay`]),
//! so non-fitting prefixes still get a state; the method assumes fitting logs, so align or
//! filter first when fitness is low. Prefixes share work through a prefix tree.
//!
//! *Simplicity* here is the inverse arc degree: with `d` the mean number of arcs per node
//! (places and transitions), `simplicity = 1 / (1 + max(0, d - 2))`; a net where every node has
//! one input and one output scores 1. (Definition from memory, after the quality dimensions of
//! Buijs, van Dongen & van der Aalst 2012, CoopIS.)

// Index loops over dense adjacency matrices read closer to the definitions.
#![allow(clippy::needless_range_loop)]

use std::collections::{BTreeSet, HashMap, HashSet, VecDeque};

use crate::conform::replay::{check_bounded, Replayer, TraceReplay};
use crate::control::Control;
use crate::discover::petri::{CompiledNet, PetriNet};
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Result of escaping-edges precision.
#[derive(Debug, Clone, PartialEq)]
pub struct Precision {
    /// `etc_p` (NaN when the model allows nothing in any state).
    pub precision: f64,
    /// `Σ ω |EE|`.
    pub escaping: u64,
    /// `Σ ω |AT|`.
    pub allowed: u64,
    /// Prefix states visited.
    pub n_states: usize,
}

/// Visible labels enabled in `m` or after silent steps (at most `budget` markings).
fn allowed(cn: &CompiledNet, label: &[u32], m: &[u32], budget: usize) -> BTreeSet<u32> {
    let mut out = BTreeSet::new();
    let mut seen: HashSet<Vec<u32>> = HashSet::new();
    seen.insert(m.to_vec());
    let mut q = VecDeque::from([m.to_vec()]);
    while let Some(x) = q.pop_front() {
        for t in 0..cn.pre.len() {
            if !cn.enabled(&x, t) {
                continue;
            }
            if cn.silent[t] {
                if seen.len() < budget {
                    let mut y = x.clone();
                    cn.fire(&mut y, t);
                    if seen.insert(y.clone()) {
                        q.push_back(y);
                    }
                }
            } else {
                out.insert(label[t]);
            }
        }
    }
    out
}

/// Escaping-edges precision of `net` on `log`.
pub fn etc_precision(
    net: &PetriNet,
    log: &EventLog,
    max_silent_states: usize,
    ctl: &Control,
) -> TmResult<Precision> {
    if log.n_cases() == 0 {
        return Err(TmError::data(
            "the event log is empty: precision needs at least one case",
        ));
    }
    let names = log.activity_names();
    let na = names.len() as u32;
    let cn = CompiledNet::new(net, names)?;
    check_bounded(net, &cn, 20_000)?;
    // Label id per transition: the log code, or a fresh id for labels the log never uses.
    let mut extra: HashMap<&str, u32> = HashMap::new();
    let label: Vec<u32> = net
        .transitions
        .iter()
        .zip(&cn.code)
        .map(|(t, c)| match (c, &t.label) {
            (Some(c), _) => *c,
            (None, Some(l)) => {
                let k = extra.len() as u32;
                *extra.entry(l.as_str()).or_insert(na + k)
            }
            (None, None) => u32::MAX,
        })
        .collect();
    // Prefix tree: children, weight, observed next activities.
    let vars = log.variants();
    let mut child: Vec<HashMap<u32, u32>> = vec![HashMap::new()];
    let mut weight: Vec<u64> = vec![0];
    for v in 0..vars.len() {
        let s = vars.sequence(v);
        let n = vars.counts[v];
        let mut node = 0usize;
        for &a in s {
            weight[node] += n;
            let next = match child[node].get(&a) {
                Some(&x) => x as usize,
                None => {
                    child.push(HashMap::new());
                    weight.push(0);
                    let id = child.len() - 1;
                    child[node].insert(a, id as u32);
                    id
                }
            };
            node = next;
        }
    }
    let rp = Replayer {
        cn: &cn,
        budget: max_silent_states,
    };
    let (mut esc, mut all, mut states) = (0u64, 0u64, 0usize);
    let mut stack: Vec<(usize, Vec<u32>)> = vec![(0, cn.initial.clone())];
    let mut scratch = TraceReplay::default();
    while let Some((node, m)) = stack.pop() {
        if weight[node] > 0 {
            states += 1;
            if states % 4096 == 0 {
                ctl.check()?;
            }
            let at = allowed(&cn, &label, &m, max_silent_states);
            let seen: BTreeSet<u32> = child[node].keys().copied().collect();
            let ee = at.difference(&seen).count() as u64;
            esc += weight[node] * ee;
            all += weight[node] * at.len() as u64;
        }
        let mut kids: Vec<(&u32, &u32)> = child[node].iter().collect();
        kids.sort_unstable();
        for (&a, &c) in kids {
            let mut m2 = m.clone();
            scratch.lacking.clear();
            rp.step(&mut m2, a, &mut scratch);
            stack.push((c as usize, m2));
        }
    }
    Ok(Precision {
        precision: if all == 0 {
            f64::NAN
        } else {
            1.0 - esc as f64 / all as f64
        },
        escaping: esc,
        allowed: all,
        n_states: states,
    })
}

/// Inverse-arc-degree simplicity of a net.
pub fn simplicity(net: &PetriNet) -> f64 {
    let d = net.degrees();
    if d.is_empty() {
        return 1.0;
    }
    let mean = d.iter().sum::<usize>() as f64 / d.len() as f64;
    1.0 / (1.0 + (mean - 2.0).max(0.0))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::alpha::alpha_net;
    use crate::discover::testlog::{log_of, running_example};
    use approx::assert_relative_eq;

    #[test]
    fn etc_on_running_example() {
        // Values from the definition of Muñoz-Gama & Carmona 2010 on the running example
        // (REFERENCES section G; our numbers).
        let net = alpha_net(&running_example(), 100_000).unwrap();
        let p = etc_precision(&net, &running_example(), 10_000, &Control::new()).unwrap();
        assert_eq!((p.escaping, p.allowed), (0, 70));
        assert_relative_eq!(p.precision, 1.0);
        let log = log_of(&[
            (&["a", "b", "c", "d", "f"], 4),
            (&["a", "c", "b", "e", "f"], 1),
        ]);
        let p = etc_precision(&net, &log, 10_000, &Control::new()).unwrap();
        assert_eq!((p.escaping, p.allowed), (5, 35));
        assert_relative_eq!(p.precision, 1.0 - 5.0 / 35.0);
    }

    #[test]
    fn simplicity_of_sequence_is_one() {
        let log = log_of(&[(&["a", "b", "c"], 1)]);
        let net = alpha_net(&log, 1000).unwrap();
        assert_relative_eq!(simplicity(&net), 1.0);
    }
}
