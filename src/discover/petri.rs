//! Place/transition nets (Petri nets) with labelled and silent transitions, initial and final
//! markings, and the workflow-net checks that discovery and conformance rely on.
//!
//! A Petri net is a bipartite graph of *places* and *transitions*; arcs carry a positive weight.
//! A *marking* puts a number of tokens on each place. A transition is *enabled* when each input
//! place holds at least the arc weight of tokens; *firing* it consumes those tokens and produces
//! tokens on its output places (Murata 1989, Proc. IEEE 77(4), the standard survey). A transition
//! either carries an activity label or is *silent* (a tau step that leaves no event in a log).
//!
//! A *workflow net* (van der Aalst 1997, Application and Theory of Petri Nets, LNCS 1248) has one
//! source place without input arcs, one sink place without output arcs, and every node on a path
//! from the source to the sink. It is *sound* when, from one token in the source, the single-token
//! sink marking can always be reached, reaching it leaves nothing else behind, and every transition
//! can fire in some run. Discovery in tracemill returns workflow nets with the initial marking
//! `[source]` and the final marking `[sink]`.
//!
//! [`CompiledNet`] is the form the replay and alignment kernels use: pre- and post-sets per
//! transition and the transitions of each log activity.
//!
//! [`coverability`] runs the Karp–Miller construction (Karp & Miller 1969, J. Computer and
//! System Sciences 3(2)) with a node budget to detect unbounded places before replay.

use std::collections::HashMap;

use crate::error::{TmError, TmResult};

/// One transition: a unique name and an activity label, or `None` for a silent transition.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Transition {
    /// Unique identifier within the net.
    pub name: String,
    /// The activity the transition records in a log; `None` for a silent step.
    pub label: Option<String>,
}

/// An arc between a place and a transition, in either direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NetArc {
    /// Place index.
    pub place: usize,
    /// Transition index.
    pub transition: usize,
    /// `true` for place -> transition (an input arc), `false` for transition -> place.
    pub into_transition: bool,
    /// Arc weight (at least 1).
    pub weight: u32,
}

/// A labelled place/transition net with an initial and a final marking.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct PetriNet {
    /// Place names (unique).
    pub places: Vec<String>,
    /// Transitions.
    pub transitions: Vec<Transition>,
    /// Arcs.
    pub arcs: Vec<NetArc>,
    /// Tokens per place at the start (same length as `places`).
    pub initial_marking: Vec<u32>,
    /// Tokens per place that mark proper completion (same length as `places`).
    pub final_marking: Vec<u32>,
}

impl PetriNet {
    /// An empty net.
    pub fn new() -> Self {
        Self::default()
    }

    /// Add a place with no tokens; returns its index.
    pub fn add_place(&mut self, name: impl Into<String>) -> usize {
        self.places.push(name.into());
        self.initial_marking.push(0);
        self.final_marking.push(0);
        self.places.len() - 1
    }

    /// Add a transition (`label = None` for a silent one); returns its index.
    pub fn add_transition(&mut self, name: impl Into<String>, label: Option<String>) -> usize {
        self.transitions.push(Transition {
            name: name.into(),
            label,
        });
        self.transitions.len() - 1
    }

    /// Add an input arc place -> transition with weight 1.
    pub fn arc_in(&mut self, place: usize, transition: usize) {
        self.arcs.push(NetArc {
            place,
            transition,
            into_transition: true,
            weight: 1,
        });
    }

    /// Add an output arc transition -> place with weight 1.
    pub fn arc_out(&mut self, transition: usize, place: usize) {
        self.arcs.push(NetArc {
            place,
            transition,
            into_transition: false,
            weight: 1,
        });
    }

    /// Check indices, weights, marking lengths and unique names.
    pub fn validate(&self) -> TmResult<()> {
        let np = self.places.len();
        let nt = self.transitions.len();
        for (i, a) in self.arcs.iter().enumerate() {
            if a.place >= np {
                return Err(TmError::data(format!(
                    "arc {i} refers to place {} but the net has {np} places",
                    a.place
                )));
            }
            if a.transition >= nt {
                return Err(TmError::data(format!(
                    "arc {i} refers to transition {} but the net has {nt} transitions",
                    a.transition
                )));
            }
            if a.weight == 0 {
                return Err(TmError::data(format!(
                    "arc {i} has weight 0; arc weights must be positive integers"
                )));
            }
        }
        if self.initial_marking.len() != np || self.final_marking.len() != np {
            return Err(TmError::data(format!(
                "markings must have one entry per place ({np}); got {} (initial) and {} (final)",
                self.initial_marking.len(),
                self.final_marking.len()
            )));
        }
        let mut seen = HashMap::new();
        for (i, p) in self.places.iter().enumerate() {
            if let Some(j) = seen.insert(p.as_str(), i) {
                return Err(TmError::data(format!(
                    "place name '{p}' is used twice (places {j} and {i})"
                )));
            }
        }
        let mut seen = HashMap::new();
        for (i, t) in self.transitions.iter().enumerate() {
            if let Some(j) = seen.insert(t.name.as_str(), i) {
                return Err(TmError::data(format!(
                    "transition name '{}' is used twice (transitions {j} and {i})",
                    t.name
                )));
            }
        }
        Ok(())
    }

    /// Check that both markings are present (non-empty), as replay and alignments need.
    pub fn require_markings(&self) -> TmResult<()> {
        self.validate()?;
        if self.initial_marking.iter().all(|&x| x == 0) {
            return Err(TmError::data(
                "the Petri net has no initial marking: every place holds 0 tokens; \
                 put a token on the source place",
            ));
        }
        if self.final_marking.iter().all(|&x| x == 0) {
            return Err(TmError::data(
                "the Petri net has no final marking: every place holds 0 tokens in it; \
                 give the sink place a token in the final marking",
            ));
        }
        Ok(())
    }

    /// Number of silent transitions.
    pub fn n_silent(&self) -> usize {
        self.transitions
            .iter()
            .filter(|t| t.label.is_none())
            .count()
    }

    /// The workflow-net source and sink, if the net is a workflow net: exactly one place without
    /// inputs, exactly one without outputs, and every node on a path from source to sink.
    pub fn workflow_ends(&self) -> Option<(usize, usize)> {
        let np = self.places.len();
        let nt = self.transitions.len();
        let mut has_in = vec![false; np];
        let mut has_out = vec![false; np];
        // Graph over nodes 0..np (places) and np..np+nt (transitions).
        let mut succ = vec![Vec::new(); np + nt];
        let mut pred = vec![Vec::new(); np + nt];
        for a in &self.arcs {
            let (s, t) = if a.into_transition {
                has_out[a.place] = true;
                (a.place, np + a.transition)
            } else {
                has_in[a.place] = true;
                (np + a.transition, a.place)
            };
            succ[s].push(t);
            pred[t].push(s);
        }
        let sources: Vec<usize> = (0..np).filter(|&p| !has_in[p]).collect();
        let sinks: Vec<usize> = (0..np).filter(|&p| !has_out[p]).collect();
        if sources.len() != 1 || sinks.len() != 1 {
            return None;
        }
        let reach = |start: usize, adj: &Vec<Vec<usize>>| {
            let mut seen = vec![false; np + nt];
            let mut stack = vec![start];
            seen[start] = true;
            while let Some(x) = stack.pop() {
                for &y in &adj[x] {
                    if !seen[y] {
                        seen[y] = true;
                        stack.push(y);
                    }
                }
            }
            seen
        };
        let f = reach(sources[0], &succ);
        let b = reach(sinks[0], &pred);
        if f.iter().zip(&b).all(|(x, y)| *x && *y) {
            Some((sources[0], sinks[0]))
        } else {
            None
        }
    }

    /// Number of arcs touching each node (places first, then transitions).
    pub fn degrees(&self) -> Vec<usize> {
        let np = self.places.len();
        let mut d = vec![0usize; np + self.transitions.len()];
        for a in &self.arcs {
            d[a.place] += 1;
            d[np + a.transition] += 1;
        }
        d
    }
}

/// A net prepared for replay against a log's activity dictionary.
#[derive(Debug, Clone)]
pub struct CompiledNet {
    /// Number of places.
    pub n_places: usize,
    /// Input `(place, weight)` per transition.
    pub pre: Vec<Vec<(u32, u32)>>,
    /// Output `(place, weight)` per transition.
    pub post: Vec<Vec<(u32, u32)>>,
    /// Log activity code of each transition; `None` for silent transitions and for labels the
    /// log never uses.
    pub code: Vec<Option<u32>>,
    /// Whether each transition is silent.
    pub silent: Vec<bool>,
    /// Transitions carrying each log activity (indexed by activity code).
    pub by_activity: Vec<Vec<u32>>,
    /// Silent transitions.
    pub silent_ids: Vec<u32>,
    /// Initial marking.
    pub initial: Vec<u32>,
    /// Final marking.
    pub final_marking: Vec<u32>,
}

impl CompiledNet {
    /// Compile `net` against the activity names of a log. Activities without a transition get
    /// an empty list (their events become log moves / missing behaviour, never an error).
    pub fn new(net: &PetriNet, activity_names: &[String]) -> TmResult<Self> {
        net.require_markings()?;
        let nt = net.transitions.len();
        let mut pre = vec![Vec::new(); nt];
        let mut post = vec![Vec::new(); nt];
        for a in &net.arcs {
            let entry = (a.place as u32, a.weight);
            if a.into_transition {
                pre[a.transition].push(entry);
            } else {
                post[a.transition].push(entry);
            }
        }
        let index: HashMap<&str, u32> = activity_names
            .iter()
            .enumerate()
            .map(|(i, s)| (s.as_str(), i as u32))
            .collect();
        let mut by_activity = vec![Vec::new(); activity_names.len()];
        let mut code = vec![None; nt];
        let mut silent = vec![false; nt];
        let mut silent_ids = Vec::new();
        for (i, t) in net.transitions.iter().enumerate() {
            match &t.label {
                None => {
                    silent[i] = true;
                    silent_ids.push(i as u32);
                }
                Some(l) => {
                    if let Some(&c) = index.get(l.as_str()) {
                        code[i] = Some(c);
                        by_activity[c as usize].push(i as u32);
                    }
                }
            }
        }
        Ok(CompiledNet {
            n_places: net.places.len(),
            pre,
            post,
            code,
            silent,
            by_activity,
            silent_ids,
            initial: net.initial_marking.clone(),
            final_marking: net.final_marking.clone(),
        })
    }

    /// Whether transition `t` is enabled in marking `m`.
    #[inline]
    pub fn enabled(&self, m: &[u32], t: usize) -> bool {
        self.pre[t].iter().all(|&(p, w)| m[p as usize] >= w)
    }

    /// Fire `t` in `m` (the caller checked that it is enabled).
    #[inline]
    pub fn fire(&self, m: &mut [u32], t: usize) {
        for &(p, w) in &self.pre[t] {
            m[p as usize] -= w;
        }
        for &(p, w) in &self.post[t] {
            m[p as usize] = m[p as usize].saturating_add(w);
        }
    }
}

/// Result of the Karp–Miller check.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Boundedness {
    /// Every place is bounded; the number of reachable markings explored.
    Bounded(usize),
    /// Place (index) can hold arbitrarily many tokens.
    Unbounded(usize),
    /// The node budget ran out before the construction finished.
    Unknown,
}

/// Karp–Miller coverability construction with at most `budget` nodes. `u32::MAX` stands for
/// omega (an unbounded count).
pub fn coverability(net: &CompiledNet, budget: usize) -> Boundedness {
    const OMEGA: u32 = u32::MAX;
    let nt = net.pre.len();
    // Each node: marking and parent index.
    let mut nodes: Vec<(Vec<u32>, usize)> = vec![(net.initial.clone(), usize::MAX)];
    let mut seen: HashMap<Vec<u32>, usize> = HashMap::new();
    seen.insert(net.initial.clone(), 0);
    let mut stack = vec![0usize];
    while let Some(n) = stack.pop() {
        for t in 0..nt {
            let m = &nodes[n].0;
            if !net.pre[t]
                .iter()
                .all(|&(p, w)| m[p as usize] == OMEGA || m[p as usize] >= w)
            {
                continue;
            }
            let mut next = m.clone();
            for &(p, w) in &net.pre[t] {
                if next[p as usize] != OMEGA {
                    next[p as usize] -= w;
                }
            }
            for &(p, w) in &net.post[t] {
                if next[p as usize] != OMEGA {
                    next[p as usize] = next[p as usize].saturating_add(w).min(OMEGA - 1);
                }
            }
            // Acceleration: compare with every ancestor on the path.
            let mut a = n;
            loop {
                let anc = &nodes[a].0;
                if anc.iter().zip(&next).all(|(x, y)| y >= x) && anc != &next {
                    for (p, (x, y)) in anc.iter().zip(next.clone()).enumerate() {
                        if y > *x {
                            let _ = y;
                            return Boundedness::Unbounded(p);
                        }
                    }
                }
                a = nodes[a].1;
                if a == usize::MAX {
                    break;
                }
            }
            if seen.contains_key(&next) {
                continue;
            }
            if nodes.len() >= budget {
                return Boundedness::Unknown;
            }
            seen.insert(next.clone(), nodes.len());
            nodes.push((next, n));
            stack.push(nodes.len() - 1);
        }
    }
    Boundedness::Bounded(nodes.len())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tiny() -> PetriNet {
        let mut n = PetriNet::new();
        let i = n.add_place("i");
        let o = n.add_place("o");
        let t = n.add_transition("t_a", Some("a".into()));
        n.arc_in(i, t);
        n.arc_out(t, o);
        n.initial_marking[i] = 1;
        n.final_marking[o] = 1;
        n
    }

    #[test]
    fn workflow_ends_found() {
        assert_eq!(tiny().workflow_ends(), Some((0, 1)));
    }

    #[test]
    fn missing_markings_are_errors() {
        let mut n = tiny();
        n.initial_marking = vec![0, 0];
        assert!(matches!(n.require_markings(), Err(TmError::Data { .. })));
        let mut n = tiny();
        n.final_marking = vec![0, 0];
        let e = n.require_markings().unwrap_err();
        assert!(e.to_string().contains("final marking"));
    }

    #[test]
    fn bad_arc_is_error() {
        let mut n = tiny();
        n.arcs.push(NetArc {
            place: 9,
            transition: 0,
            into_transition: true,
            weight: 1,
        });
        assert!(n.validate().is_err());
    }

    #[test]
    fn karp_miller_finds_pump() {
        // A silent transition that consumes from p and puts tokens back on p and q: q unbounded.
        let mut n = tiny();
        let q = n.add_place("q");
        let t = n.add_transition("pump", None);
        n.arc_in(0, t);
        n.arc_out(t, 0);
        n.arc_out(t, q);
        let c = CompiledNet::new(&n, &["a".to_string()]).unwrap();
        assert_eq!(coverability(&c, 1000), Boundedness::Unbounded(q));
        let c = CompiledNet::new(&tiny(), &["a".to_string()]).unwrap();
        assert_eq!(coverability(&c, 1000), Boundedness::Bounded(2));
    }
}
