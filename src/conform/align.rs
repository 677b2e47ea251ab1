//! Optimal alignments (Adriansyah, van Dongen & van der Aalst 2011, "Conformance checking using
//! cost-based fitness analysis", IEEE EDOC, 55-64).
//!
//! An alignment pairs a trace with a complete run of the net (initial to final marking) through
//! *moves*: a synchronous move (the event and a transition with its label, cost 0), a log move
//! (an event the model does not do here, cost 1), a model move on a visible transition (cost 1)
//! or on a silent transition (cost 0). An optimal alignment is a cheapest path in the
//! *synchronous product* whose states are `(marking, position in the trace)`, from
//! `(initial, 0)` to `(final, |trace|)`.
//!
//! We search it with A*. The heuristic counts the remaining events whose activity no
//! transition carries: each of them needs a log move, so it never overestimates (admissible)
//! and A* stays optimal. (The marking-equation bound of van Dongen 2018 is tighter; it needs a
//! linear-programming solver, which tracemill does not ship.) Ties prefer states further along
//! the trace, which finds fitting traces with almost no search.
//!
//! Fitness of a trace: `1 - cost / (|trace| + cost of the cheapest model run)` (the empty trace
//! aligned to the model gives the latter). Log-level fitness sums costs and denominators over
//! cases; the mean of trace fitness values is the other common convention, also reported.
//!
//! Each variant is aligned once, in parallel; `max_states` bounds the states a variant may
//! expand, and variants that hit it are reported as given up (their fitness is NaN) instead of
//! running forever.

use std::cmp::Reverse;
use std::collections::{BinaryHeap, HashMap};

use rayon::prelude::*;

use crate::conform::replay::check_bounded;
use crate::control::Control;
use crate::discover::petri::{CompiledNet, PetriNet};
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Parameters of the alignment search.
#[derive(Debug, Clone, PartialEq)]
pub struct AlignParams {
    /// States expanded per variant before giving up (default 200 000).
    pub max_states: usize,
    /// Markings explored by the boundedness check (default 20 000).
    pub boundedness_budget: usize,
}

impl Default for AlignParams {
    fn default() -> Self {
        AlignParams {
            max_states: 200_000,
            boundedness_budget: 20_000,
        }
    }
}

/// Kind of an alignment move.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MoveKind {
    /// Event and transition together (cost 0).
    Sync,
    /// Event only (cost 1).
    Log,
    /// Visible transition only (cost 1).
    Model,
    /// Silent transition (cost 0).
    Silent,
}

impl MoveKind {
    /// Numeric code for the Python boundary.
    pub fn code(self) -> u8 {
        match self {
            MoveKind::Sync => 0,
            MoveKind::Log => 1,
            MoveKind::Model => 2,
            MoveKind::Silent => 3,
        }
    }
}

/// One move: kind, event position (or -1) and transition (or -1).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Move {
    /// Kind of move.
    pub kind: MoveKind,
    /// Position of the event in the trace, -1 for model moves.
    pub event: i32,
    /// Transition index, -1 for log moves.
    pub transition: i32,
}

/// Alignment of one trace.
#[derive(Debug, Clone, PartialEq)]
pub struct TraceAlignment {
    /// Optimal cost (`None` when the search gave up or no complete run exists).
    pub cost: Option<u64>,
    /// The moves of an optimal alignment.
    pub moves: Vec<Move>,
    /// States expanded.
    pub expanded: u64,
    /// Whether the state bound was hit.
    pub gave_up: bool,
}

/// Alignments of a log.
#[derive(Debug, Clone, PartialEq)]
pub struct LogAlignment {
    /// One per variant (order of [`EventLog::variants`]).
    pub variants: Vec<TraceAlignment>,
    /// Variant of each case.
    pub case_variant: Vec<u32>,
    /// Frequency of each variant.
    pub counts: Vec<u64>,
    /// Length of each variant.
    pub lengths: Vec<u64>,
    /// Cost of the cheapest complete model run.
    pub model_run_cost: u64,
    /// `1 - Σ n·cost / Σ n·(|σ| + model_run_cost)` over aligned variants.
    pub fitness: f64,
    /// Mean of per-case fitness over aligned cases.
    pub mean_trace_fitness: f64,
    /// Cases whose variant gave up.
    pub n_gave_up_cases: u64,
}

struct Node {
    parent: u32,
    mv: Move,
}

/// Align one trace (activity codes of the net's log dictionary).
pub fn align_trace(cn: &CompiledNet, trace: &[u32], max_states: usize) -> TraceAlignment {
    let n = trace.len();
    // h[i]: events from i on that no transition carries.
    let mut h = vec![0u64; n + 1];
    for i in (0..n).rev() {
        h[i] = h[i + 1] + u64::from(cn.by_activity[trace[i] as usize].is_empty());
    }
    let nt = cn.pre.len();
    let mut best: HashMap<(Vec<u32>, u32), (u64, u32)> = HashMap::new();
    let mut nodes: Vec<Node> = vec![Node {
        parent: u32::MAX,
        mv: Move {
            kind: MoveKind::Sync,
            event: -1,
            transition: -1,
        },
    }];
    let mut marks: Vec<(Vec<u32>, u32)> = vec![(cn.initial.clone(), 0)];
    best.insert((cn.initial.clone(), 0), (0, 0));
    // (f, -pos, g, node)
    let mut heap: BinaryHeap<Reverse<(u64, Reverse<u32>, u64, u32)>> = BinaryHeap::new();
    heap.push(Reverse((h[0], Reverse(0), 0, 0)));
    let mut expanded = 0u64;
    while let Some(Reverse((_, Reverse(pos), g, id))) = heap.pop() {
        let key = marks[id as usize].clone();
        if best.get(&key).is_some_and(|&(bg, bid)| bg < g || bid != id) {
            continue;
        }
        let (m, _) = &key;
        let i = pos as usize;
        if i == n && m == &cn.final_marking {
            let mut moves = Vec::new();
            let mut x = id;
            while nodes[x as usize].parent != u32::MAX {
                moves.push(nodes[x as usize].mv);
                x = nodes[x as usize].parent;
            }
            moves.reverse();
            return TraceAlignment {
                cost: Some(g),
                moves,
                expanded,
                gave_up: false,
            };
        }
        expanded += 1;
        if expanded as usize > max_states {
            return TraceAlignment {
                cost: None,
                moves: Vec::new(),
                expanded,
                gave_up: true,
            };
        }
        let mut push = |nm: Vec<u32>, npos: u32, cost: u64, mv: Move| {
            let ng = g + cost;
            let k = (nm, npos);
            if best.get(&k).is_some_and(|&(bg, _)| bg <= ng) {
                return;
            }
            nodes.push(Node { parent: id, mv });
            let nid = (nodes.len() - 1) as u32;
            marks.push(k.clone());
            best.insert(k, (ng, nid));
            heap.push(Reverse((ng + h[npos as usize], Reverse(npos), ng, nid)));
        };
        if i < n {
            push(
                m.clone(),
                pos + 1,
                1,
                Move {
                    kind: MoveKind::Log,
                    event: pos as i32,
                    transition: -1,
                },
            );
            for &t in &cn.by_activity[trace[i] as usize] {
                if cn.enabled(m, t as usize) {
                    let mut nm = m.clone();
                    cn.fire(&mut nm, t as usize);
                    push(
                        nm,
                        pos + 1,
                        0,
                        Move {
                            kind: MoveKind::Sync,
                            event: pos as i32,
                            transition: t as i32,
                        },
                    );
                }
            }
        }
        for t in 0..nt {
            if cn.enabled(m, t) {
                let mut nm = m.clone();
                cn.fire(&mut nm, t);
                let silent = cn.silent[t];
                push(
                    nm,
                    pos,
                    u64::from(!silent),
                    Move {
                        kind: if silent {
                            MoveKind::Silent
                        } else {
                            MoveKind::Model
                        },
                        event: -1,
                        transition: t as i32,
                    },
                );
            }
        }
    }
    TraceAlignment {
        cost: None,
        moves: Vec::new(),
        expanded,
        gave_up: false,
    }
}

/// Align every variant of `log` to `net`.
pub fn align_log(
    net: &PetriNet,
    log: &EventLog,
    p: &AlignParams,
    ctl: &Control,
) -> TmResult<LogAlignment> {
    if log.n_cases() == 0 {
        return Err(TmError::data("the event log is empty: nothing to align"));
    }
    if p.max_states == 0 {
        return Err(TmError::param(
            "max_states",
            "max_states must be at least 1",
        ));
    }
    let cn = CompiledNet::new(net, log.activity_names())?;
    check_bounded(net, &cn, p.boundedness_budget)?;
    // The cheapest model run gets its own, larger budget: it is computed once.
    let empty = align_trace(&cn, &[], p.max_states.max(1_000_000));
    let model_run_cost = match empty.cost {
        Some(c) => c,
        None if empty.gave_up => {
            return Err(TmError::Limit {
                message: format!(
                    "no complete run of the net was found within {} states; the net may \
                     have no reachable final marking",
                    p.max_states.max(1_000_000)
                ),
            })
        }
        None => {
            return Err(TmError::data(
                "the final marking cannot be reached from the initial marking: no complete \
                 run of the net exists, so no alignment does",
            ))
        }
    };
    let vars = log.variants();
    ctl.set_total(vars.len() as u64);
    let res: Vec<TraceAlignment> = (0..vars.len())
        .into_par_iter()
        .map(|v| {
            ctl.check()?;
            ctl.advance(1);
            Ok(align_trace(&cn, vars.sequence(v), p.max_states))
        })
        .collect::<TmResult<Vec<_>>>()?;
    let lengths: Vec<u64> = (0..vars.len())
        .map(|v| vars.sequence(v).len() as u64)
        .collect();
    let (mut num, mut den, mut fsum, mut ncases, mut gave) = (0u64, 0u64, 0f64, 0u64, 0u64);
    for (v, a) in res.iter().enumerate() {
        let n = vars.counts[v];
        match a.cost {
            Some(c) => {
                let d = lengths[v] + model_run_cost;
                num += n * c;
                den += n * d;
                let f = if d == 0 {
                    1.0
                } else {
                    1.0 - c as f64 / d as f64
                };
                fsum += n as f64 * f;
                ncases += n;
            }
            None => gave += n,
        }
    }
    Ok(LogAlignment {
        fitness: if den == 0 {
            f64::NAN
        } else {
            1.0 - num as f64 / den as f64
        },
        mean_trace_fitness: if ncases == 0 {
            f64::NAN
        } else {
            fsum / ncases as f64
        },
        n_gave_up_cases: gave,
        variants: res,
        case_variant: vars.case_variant.clone(),
        counts: vars.counts.clone(),
        lengths,
        model_run_cost,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::alpha::alpha_net;
    use crate::discover::testlog::{log_of, running_example};
    use approx::assert_relative_eq;

    #[test]
    fn costs_on_alpha_net_of_running_example() {
        // Costs derived from the definition of Adriansyah et al. 2011 with a brute-force search
        // (REFERENCES section G; our numbers).
        let net = alpha_net(&running_example(), 100_000).unwrap();
        let cases: [(&[&str], u64, f64); 5] = [
            (&["a", "b", "d", "f"], 1, 0.888889),
            (&["a", "c", "b", "d", "e", "f"], 1, 0.909091),
            (&["a", "b", "c", "f"], 1, 0.888889),
            (&["a", "f"], 3, 0.571429),
            (&["x", "a", "b", "c", "d", "f"], 1, 0.909091),
        ];
        for (t, cost, f) in cases {
            let log = log_of(&[(t, 1), (&["a", "b", "c", "d", "f"], 1)]);
            let r = align_log(&net, &log, &AlignParams::default(), &Control::new()).unwrap();
            assert_eq!(r.model_run_cost, 5);
            let v = r.case_variant[0] as usize;
            assert_eq!(r.variants[v].cost, Some(cost), "{t:?}");
            let d = (t.len() as u64 + 5) as f64;
            assert_relative_eq!(1.0 - cost as f64 / d, f, epsilon = 1e-6);
        }
    }

    #[test]
    fn gives_up_at_bound() {
        let net = alpha_net(&running_example(), 100_000).unwrap();
        let log = log_of(&[(&["f", "d", "c", "b", "a", "f", "e"], 1)]);
        let p = AlignParams {
            max_states: 3,
            ..Default::default()
        };
        let r = align_log(&net, &log, &p, &Control::new()).unwrap();
        assert!(r.variants[0].gave_up);
        assert_eq!(r.n_gave_up_cases, 1);
    }
}
