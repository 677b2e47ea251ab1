//! Fall-throughs: what inductive discovery does when no cut fits (Leemans, Fahland & van der
//! Aalst 2013; the list follows Leemans' PhD thesis 2017, from memory). Tried in order:
//! 1. *activity once per trace*: an activity occurring exactly once in every trace runs in
//!    parallel with the rest;
//! 2. *activity concurrent*: an activity whose removal leaves a log with a cut runs in parallel
//!    with the rest (as a choice with tau / a loop when it is optional / repeated, so that
//!    every trace still fits);
//! 3. *strict tau loop*: split traces where an end activity is directly followed by a start
//!    activity and loop over the pieces;
//! 4. *tau loop*: split traces before every start activity and loop over the pieces;
//! 5. *flower*: any sequence of the activities, `loop(tau, a1, ..., an)`.

use super::cuts::{loop_cut, parallel_cut, sequence_cut, xor_cut, LocalDfg};
use super::SubLog;

/// The occurrence range `(min, max)` of activity `a` per trace.
pub fn occurrence_range(log: &SubLog, a: u32) -> (usize, usize) {
    let mut lo = usize::MAX;
    let mut hi = 0;
    for (t, _) in log {
        let k = t.iter().filter(|&&x| x == a).count();
        lo = lo.min(k);
        hi = hi.max(k);
    }
    (lo, hi)
}

/// Activity occurring exactly once in every trace (the smallest code), if any.
pub fn once_per_trace(log: &SubLog, g: &LocalDfg) -> Option<u32> {
    if g.n() < 2 {
        return None;
    }
    g.acts
        .iter()
        .copied()
        .find(|&a| occurrence_range(log, a) == (1, 1))
}

/// Activity whose removal leaves a log with a cut (the smallest code), if any.
pub fn concurrent_activity(log: &SubLog, g: &LocalDfg, n_global: usize) -> Option<u32> {
    if g.n() < 2 {
        return None;
    }
    for &a in &g.acts {
        let rest = remove_activity(log, a);
        let h = LocalDfg::new(&rest, n_global);
        if h.n() == 0 {
            continue;
        }
        if xor_cut(&h).is_some()
            || sequence_cut(&h).is_some()
            || parallel_cut(&h).is_some()
            || loop_cut(&h).is_some()
        {
            return Some(a);
        }
    }
    None
}

/// The log with every event of `a` removed.
pub fn remove_activity(log: &SubLog, a: u32) -> SubLog {
    log.iter()
        .map(|(t, c)| (t.iter().copied().filter(|&x| x != a).collect(), *c))
        .collect()
}

/// Split traces where an end activity is directly followed by a start activity; `None` when
/// no trace splits.
pub fn strict_tau_loop(log: &SubLog, g: &LocalDfg) -> Option<SubLog> {
    let is = |v: &Vec<u64>, a: u32| g.acts.binary_search(&a).map(|i| v[i] > 0).unwrap_or(false);
    split_where(log, |prev, next| is(&g.end, prev) && is(&g.start, next))
}

/// Split traces before every start activity; `None` when no trace splits.
pub fn tau_loop(log: &SubLog, g: &LocalDfg) -> Option<SubLog> {
    let is = |a: u32| {
        g.acts
            .binary_search(&a)
            .map(|i| g.start[i] > 0)
            .unwrap_or(false)
    };
    split_where(log, |_, next| is(next))
}

fn split_where(log: &SubLog, cut: impl Fn(u32, u32) -> bool) -> Option<SubLog> {
    let mut out: SubLog = Vec::new();
    let mut any = false;
    for (t, c) in log {
        let mut cur: Vec<u32> = Vec::new();
        for (i, &a) in t.iter().enumerate() {
            if i > 0 && cut(t[i - 1], a) {
                out.push((std::mem::take(&mut cur), *c));
                any = true;
            }
            cur.push(a);
        }
        out.push((cur, *c));
    }
    any.then_some(out)
}
