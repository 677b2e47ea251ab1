//! Process discovery: models of the process behind an event log.
//!
//! * [`dfg`]: directly-follows graphs with frequency and performance annotations and filters;
//! * [`dependency`]: dependency graphs with the heuristic measures (Weijters & Ribeiro 2011);
//! * [`alpha`]: the alpha algorithm (van der Aalst, Weijters & Maruster 2004) -> Petri net;
//! * [`inductive`]: inductive discovery, IM and IMf (Leemans, Fahland & van der Aalst 2013) ->
//!   process tree -> sound workflow net;
//! * [`tree`]: process trees and their translation to workflow nets;
//! * [`petri`]: Petri nets, markings, workflow-net checks, coverability.
//!
//! Every method reads the log through its variants or its directly-follows counts, so its cost
//! grows with the number of distinct traces rather than the number of cases.
//!
//! ```
//! use tracemill::discover::inductive::{inductive_on, InductiveParams};
//! use tracemill::control::Control;
//! let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
//! let log = vec![(vec![0, 1, 2], 3), (vec![0, 2, 1], 2)];
//! let tree = inductive_on(log, &names, &InductiveParams::default(), &Control::new()).unwrap();
//! assert_eq!(tree.to_string(), "sequence('a', parallel('b', 'c'))");
//! let net = tree.to_petri_net();
//! assert!(net.workflow_ends().is_some());
//! ```

pub mod alpha;
pub mod dependency;
pub mod dfg;
pub mod inductive;
pub mod petri;
pub mod tree;

pub use petri::PetriNet;
pub use tree::ProcessTree;

#[cfg(test)]
pub(crate) mod testlog {
    use crate::log::{EventLog, LogInput};

    /// A log from variants with multiplicities; timestamps one hour apart.
    pub fn log_of(variants: &[(&[&str], usize)]) -> EventLog {
        let mut acts: Vec<String> = Vec::new();
        let mut input = LogInput::default();
        let mut case = 0u32;
        for (trace, n) in variants {
            for _ in 0..*n {
                for (i, a) in trace.iter().enumerate() {
                    let ai = acts.iter().position(|x| x == a).unwrap_or_else(|| {
                        acts.push((*a).to_string());
                        acts.len() - 1
                    });
                    input.case.push(case);
                    input.activity.push(ai as u32);
                    input.time.push(i as i64 * 3_600_000_000_000);
                }
                input.case_names.push(format!("c{case}"));
                case += 1;
            }
        }
        input.activity_names = acts;
        EventLog::build(input).unwrap().0
    }

    /// The running example L of REFERENCES section G.
    pub fn running_example() -> EventLog {
        log_of(&[
            (&["a", "b", "c", "d", "f"], 4),
            (&["a", "c", "b", "d", "f"], 3),
            (&["a", "b", "c", "e", "f"], 2),
            (&["a", "c", "b", "e", "f"], 1),
        ])
    }
}
