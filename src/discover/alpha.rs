//! The alpha algorithm (van der Aalst, Weijters & Maruster 2004, IEEE TKDE 16(9):1128-1142).
//!
//! From the directly-follows relation `a > b` of a log the algorithm derives the *footprint*:
//! * causality `a -> b` iff `a > b` and not `b > a`;
//! * parallelism `a || b` iff `a > b` and `b > a`;
//! * choice `a # b` iff neither (so `a # a` unless `a` directly follows itself).
//!
//! Places come from the pairs of activity sets `(A, B)` with every `a ∈ A` causally before
//! every `b ∈ B`, and both `A` and `B` internally in choice; only the maximal pairs are kept
//! (`Y_L`). Each pair becomes a place with input transitions `A` and output transitions `B`; a
//! source place feeds the start activities and the end activities feed a sink place. The result
//! is a workflow net with initial marking `[source]` and final marking `[sink]`.
//!
//! Known limits from the paper: short loops (length one and two) and non-local dependencies
//! are not discovered correctly; the result is not guaranteed to be sound on arbitrary logs.
//! Pairs are enumerated by growing the single-pair seeds `({a}, {b})` through unions that stay
//! valid; `max_candidates` bounds that growth.

use std::collections::{BTreeSet, HashSet};

use crate::discover::petri::PetriNet;
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Footprint relation of a pair of activities.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Footprint {
    /// `a -> b`.
    Causal,
    /// `b -> a` (`a <- b`).
    Reverse,
    /// `a || b`.
    Parallel,
    /// `a # b`.
    Choice,
}

/// The footprint matrix (row-major `na x na`) of a directly-follows presence matrix.
pub fn footprint(follows: &[bool], na: usize) -> Vec<Footprint> {
    let mut out = vec![Footprint::Choice; na * na];
    for a in 0..na {
        for b in 0..na {
            let ab = follows[a * na + b];
            let ba = follows[b * na + a];
            out[a * na + b] = match (ab, ba) {
                (true, false) => Footprint::Causal,
                (false, true) => Footprint::Reverse,
                (true, true) => Footprint::Parallel,
                (false, false) => Footprint::Choice,
            };
        }
    }
    out
}

type SetPair = (BTreeSet<u32>, BTreeSet<u32>);

/// The maximal place pairs `Y_L` from a footprint over the activities `present`.
pub fn alpha_pairs(fp: &[Footprint], na: usize, max_candidates: usize) -> TmResult<Vec<SetPair>> {
    let causal = |a: u32, b: u32| fp[a as usize * na + b as usize] == Footprint::Causal;
    let choice = |a: u32, b: u32| fp[a as usize * na + b as usize] == Footprint::Choice;
    let internally_choice = |s: &BTreeSet<u32>| s.iter().all(|&x| s.iter().all(|&y| choice(x, y)));
    let valid = |(a, b): &SetPair| {
        internally_choice(a)
            && internally_choice(b)
            && a.iter().all(|&x| b.iter().all(|&y| causal(x, y)))
    };
    let mut all: HashSet<SetPair> = HashSet::new();
    let mut frontier: Vec<SetPair> = Vec::new();
    for a in 0..na as u32 {
        for b in 0..na as u32 {
            if causal(a, b) && choice(a, a) && choice(b, b) {
                let p = (BTreeSet::from([a]), BTreeSet::from([b]));
                if all.insert(p.clone()) {
                    frontier.push(p);
                }
            }
        }
    }
    let seeds: Vec<SetPair> = frontier.clone();
    while let Some(p) = frontier.pop() {
        for s in &seeds {
            let merged: SetPair = (
                p.0.union(&s.0).copied().collect(),
                p.1.union(&s.1).copied().collect(),
            );
            if merged != p && !all.contains(&merged) && valid(&merged) {
                if all.len() >= max_candidates {
                    return Err(TmError::Limit {
                        message: format!(
                            "the alpha algorithm generated more than {max_candidates} candidate \
                             places; raise max_candidates or filter the log"
                        ),
                    });
                }
                all.insert(merged.clone());
                frontier.push(merged);
            }
        }
    }
    let mut list: Vec<SetPair> = all.into_iter().collect();
    list.sort();
    let maximal: Vec<SetPair> = list
        .iter()
        .filter(|(a, b)| {
            !list.iter().any(|(a2, b2)| {
                (a2.len() + b2.len() > a.len() + b.len()) && a.is_subset(a2) && b.is_subset(b2)
            })
        })
        .cloned()
        .collect();
    Ok(maximal)
}

/// Run the alpha algorithm on `log`; returns a workflow net whose transitions are the
/// activities (name = label = activity).
pub fn alpha_net(log: &EventLog, max_candidates: usize) -> TmResult<PetriNet> {
    if log.n_cases() == 0 {
        return Err(TmError::data(
            "the event log is empty: the alpha algorithm needs at least one case",
        ));
    }
    let names = log.activity_names();
    let na = names.len();
    let vars = log.variants();
    let mut follows = vec![false; na * na];
    let mut present = vec![false; na];
    let mut start = vec![false; na];
    let mut end = vec![false; na];
    for v in 0..vars.len() {
        let s = vars.sequence(v);
        if s.is_empty() {
            continue;
        }
        start[s[0] as usize] = true;
        end[s[s.len() - 1] as usize] = true;
        for &a in s {
            present[a as usize] = true;
        }
        for w in s.windows(2) {
            follows[w[0] as usize * na + w[1] as usize] = true;
        }
    }
    let fp = footprint(&follows, na);
    let pairs = alpha_pairs(&fp, na, max_candidates)?;
    let mut net = PetriNet::new();
    let mut tid = vec![usize::MAX; na];
    for a in (0..na).filter(|&a| present[a]) {
        tid[a] = net.add_transition(names[a].clone(), Some(names[a].clone()));
    }
    let src = net.add_place("source");
    net.initial_marking[src] = 1;
    for a in (0..na).filter(|&a| start[a]) {
        net.arc_in(src, tid[a]);
    }
    let set_name = |s: &BTreeSet<u32>| {
        s.iter()
            .map(|&x| names[x as usize].as_str())
            .collect::<Vec<_>>()
            .join(",")
    };
    for (a, b) in &pairs {
        let p = net.add_place(format!("({{{}}},{{{}}})", set_name(a), set_name(b)));
        for &x in a {
            net.arc_out(tid[x as usize], p);
        }
        for &y in b {
            net.arc_in(p, tid[y as usize]);
        }
    }
    let sink = net.add_place("sink");
    net.final_marking[sink] = 1;
    for a in (0..na).filter(|&a| end[a]) {
        net.arc_out(tid[a], sink);
    }
    Ok(net)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::testlog::{log_of, running_example};

    #[test]
    fn running_example_places() {
        // Y_L of the running example, derived from the definition in van der Aalst et al. 2004
        // (REFERENCES section G): 5 pairs + source + sink = 7 places.
        let net = alpha_net(&running_example(), 100_000).unwrap();
        assert_eq!(net.places.len(), 7);
        let mut names: Vec<&str> = net.places.iter().map(String::as_str).collect();
        names.sort_unstable();
        assert_eq!(
            names,
            vec![
                "({a},{b})",
                "({a},{c})",
                "({b},{d,e})",
                "({c},{d,e})",
                "({d,e},{f})",
                "sink",
                "source"
            ]
        );
        assert_eq!(net.workflow_ends(), Some((0, 6)));
    }

    #[test]
    fn choice_log() {
        // L = [abd, acd]: a -> b, a -> c, b # c, so one place ({a},{b,c}) and one ({b,c},{d}).
        let net = alpha_net(
            &log_of(&[(&["a", "b", "d"], 1), (&["a", "c", "d"], 1)]),
            1000,
        )
        .unwrap();
        assert!(net.places.contains(&"({a},{b,c})".to_string()));
        assert!(net.places.contains(&"({b,c},{d})".to_string()));
        assert_eq!(net.places.len(), 4);
    }
}
