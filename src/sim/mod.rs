//! A process simulator that writes event logs together with their ground truth.
//!
//! Analysis methods are easiest to check on data whose answer is known. This module reads a
//! small declarative process description ([`ProcessSpec`], JSON), simulates cases through it
//! with queueing at resource pools, and returns the columns of an event log
//! ([`crate::LogInput`]) plus a [`Truth`]: the hidden segment of each case, the deviation
//! planted in it, and the time of a planted change of behaviour. The built-in
//! [`workshop_scenario`] is a bicycle-repair workshop.
//!
//! How the engine works (parallel plans, then one discrete-event run over FIFO queues) is
//! described in [`engine`]. The method is the textbook one: a process tree of sequence,
//! exclusive choice, parallel and loop operators (as in the process-tree notation of
//! van der Aalst, *Process Mining: Data Science in Action*, 2nd ed. 2016, ch. 3 \[mem\]) played
//! out stochastically, and multi-server queues (Kendall's M/M/c when times are exponential;
//! Kleinrock 1975, *Queueing Systems* vol. 1, ch. 3 \[mem\]). The tests compare the mean
//! waiting time of an M/M/2 queue with the Erlang C formula.
//!
//! # The JSON format
//!
//! All durations and means are in `time_unit` (`"second"`, `"minute"` (default), `"hour"`,
//! `"day"`). A *dist* is one of `{"dist": "constant", "value"}`, `{"dist": "uniform", "low",
//! "high"}`, `{"dist": "normal", "mean", "sd"}`, `{"dist": "lognormal", "mean", "sd"}` (mean
//! and sd of the variable itself), `{"dist": "exponential", "mean"}`, `{"dist": "triangular",
//! "low", "mode", "high"}`; a negative service time counts as 0. Unknown keys are errors.
//!
//! | key | content |
//! |---|---|
//! | `name`, `case_prefix` | optional; case labels are `case_prefix` + a 1-based number of ≥ 6 digits (default `"R"`) |
//! | `start` | ISO 8601 date-time (UTC if no offset) or integer ns since the epoch |
//! | `arrival` | `{"mean", "weekly"?: [7 weights Mon..Sun], "daily"?: [24 weights]}`: Poisson arrivals, rate = weights / mean |
//! | `segments` | `[{"name", "p"}]`, shares summing to 1; none = one segment `"all"` |
//! | `case_attributes` | `[{"type": "categorical", "name", "values", "weights", "by_segment"?: {seg: weights}}`, `{"type": "numeric", "name", "dist", "by_segment"?: {seg: dist}, "integer"?: bool}`, `{"type": "bool", "name", "p", "by_segment"?: {seg: p}}]` |
//! | `resources` | `[{"name", "capacity", "hours"?: {"days": ["mon", ...], "from": 8, "to": 18}}]`: members `"{name}-1"`..., FIFO queue; work pauses outside hours |
//! | `activities` | `[{"name", "duration": dist, "by_segment"?: {seg: dist}, "resource"?: pool, "lifecycle"?: bool}]`; `lifecycle` adds a "start" event |
//! | `flow` | a node: `{"step": activity}`, `{"sequence": [node]}`, `{"parallel": [node]}`, `{"choice": [branch]}`, `{"loop": {"body": node, "redo"?: node, "p_repeat", "by_segment"?: {seg: p}, "max"}}` |
//! | branch | `{"label"?, "p", "by_segment"?: {seg: p}, "by_attribute"?: [{"if": cond, "p"}], "when"?: cond, "then"?: node}`; first matching `by_attribute`, else segment, else `p`; `when` false → 0; sum < 1 leaves a chance of no branch, sum > 1 is rescaled |
//! | cond | all given clauses hold: `"segment": [names]`, `"attr"` with `"in": [values]` / `"gt"`, `"ge"`, `"lt"`, `"le"` / `"is": bool`, `"all": [cond]`, `"any": [cond]`, `"not": cond` |
//! | `deviations` | `[{"kind": "skip", "step"}`, `{"kind": "swap", "first", "second"}`, `{"kind": "repeat", "step"}]`, each with `"rate"` and optional `"name"`; at most one per case |
//! | `drift` | `{"at": time` or `"at_fraction": f, "choice_overrides"?: {label: p}, "duration_overrides"?: {activity: dist}, "duration_factors"?: {activity: f}, "add_step_after"?: [{"after", "step"}], "remove_steps"?: [activity]}`, for cases arriving at or after the change |
//! | `event_attributes` | `[{"name", "dist"?, "by_activity"?: {activity: dist}}]`: numbers on "complete" events, null elsewhere |
//!
//! # Example
//!
//! ```
//! use tracemill::control::Control;
//! use tracemill::sim::{simulate, ProcessSpec};
//! use tracemill::EventLog;
//!
//! let spec = ProcessSpec::from_json(r#"{
//!   "start": "2025-01-06T08:00:00Z",
//!   "arrival": {"mean": 10},
//!   "segments": [{"name": "easy", "p": 0.7}, {"name": "hard", "p": 0.3}],
//!   "resources": [{"name": "clerk", "capacity": 2}],
//!   "activities": [
//!     {"name": "register", "duration": {"dist": "exponential", "mean": 5}, "resource": "clerk"},
//!     {"name": "check", "duration": {"dist": "triangular", "low": 5, "mode": 10, "high": 30},
//!      "by_segment": {"hard": {"dist": "constant", "value": 60}}, "resource": "clerk",
//!      "lifecycle": true},
//!     {"name": "decide", "duration": {"dist": "constant", "value": 1}}
//!   ],
//!   "flow": {"sequence": [
//!     {"step": "register"},
//!     {"loop": {"body": {"step": "check"}, "p_repeat": 0.1, "by_segment": {"hard": 0.5}, "max": 3}},
//!     {"choice": [{"p": 0.2, "by_segment": {"hard": 0.9}, "then": {"step": "decide"}}]}
//!   ]},
//!   "deviations": [{"kind": "skip", "step": "register", "rate": 0.05}]
//! }"#).unwrap();
//! let sim = simulate(&spec, 1000, 42, &Control::new()).unwrap();
//! assert_eq!(sim.truth.segment.len(), 1000);
//! assert_eq!(sim.truth.deviation_names, ["none", "skip register"]);
//! let (log, _) = EventLog::build(sim.input).unwrap();
//! assert_eq!(log.n_cases(), 1000);
//! ```

mod compile;
pub mod engine;
pub mod scenario;
pub mod spec;

pub use engine::{simulate, Simulation, Truth};
pub use scenario::{workshop_scenario, WORKSHOP_JSON};
pub use spec::ProcessSpec;
