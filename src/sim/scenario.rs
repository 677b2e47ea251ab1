//! The built-in scenario: a bicycle-repair workshop.
//!
//! Cases are repair orders. A bike is received at the front desk and inspected; a quick job
//! (a flat tyre) is fixed on the spot, everything else is quoted, approved by the customer,
//! possibly waits for parts, may need an electrical diagnosis, then has its drivetrain and its
//! brakes repaired in parallel (a wheel may need truing after the brakes), and is test-ridden
//! until it passes (a failed ride sends it back to the drivetrain). Finally it is cleaned
//! while the customer is notified, and handed over when the customer comes.
//!
//! Planted structure (the ground truth returned by [`super::simulate`]):
//!
//! * **Segments**: "quick fix" (40 %), "standard service" (32 %), "major overhaul" (16 %,
//!   mostly needs parts, long repairs, more failed test rides), "e-bike electrical" (12 %,
//!   electrical diagnosis). The case attributes `bike_type`, `customer_kind`,
//!   `promised_days`, `value_eur` and `express` depend on the segment.
//! * **Slow cases**: parts orders (days of waiting), which are likelier for major overhauls and
//!   for cargo bikes (`bike_type == "cargo"`, a rule on the case attribute).
//! * **Bottleneck**: the "senior mechanic" pool (3 people, weekdays only) does wheel truing and
//!   electrical diagnosis at a utilisation near 0.9, so queues form before those activities.
//! * **Deviations**: skipped test ride (3 %), clean before test ride (2 %), inspection done
//!   twice (1 %).
//! * **Drift**: from the arrival of the middle case on, a "Triage" step follows "Receive bike"
//!   and parts take twice as long (a new supplier).
//!
//! Times are in minutes; arrivals come on weekdays and Saturdays between 08:00 and 18:00 UTC,
//! about 560 a week; the simulation starts on Monday 2025-01-06. A case has about 11 events.

use super::spec::ProcessSpec;

/// The workshop scenario as JSON text (the same as [`workshop_scenario`]).
pub const WORKSHOP_JSON: &str = r#"{
  "name": "bicycle repair workshop",
  "case_prefix": "R",
  "time_unit": "minute",
  "start": "2025-01-06T00:00:00Z",
  "arrival": {
    "mean": 6,
    "weekly": [1, 1, 1, 1, 1, 0.6, 0],
    "daily": [0, 0, 0, 0, 0, 0, 0, 0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 0, 0, 0, 0, 0, 0]
  },
  "segments": [
    {"name": "quick fix", "p": 0.40},
    {"name": "standard service", "p": 0.32},
    {"name": "major overhaul", "p": 0.16},
    {"name": "e-bike electrical", "p": 0.12}
  ],
  "case_attributes": [
    {"type": "categorical", "name": "bike_type",
     "values": ["city", "road", "mountain", "e-bike", "cargo"],
     "weights": [0.35, 0.2, 0.2, 0.15, 0.1],
     "by_segment": {
       "quick fix": [0.5, 0.25, 0.2, 0.03, 0.02],
       "standard service": [0.4, 0.25, 0.25, 0.05, 0.05],
       "major overhaul": [0.2, 0.15, 0.3, 0.05, 0.3],
       "e-bike electrical": [0, 0, 0, 0.8, 0.2]
     }},
    {"type": "categorical", "name": "customer_kind",
     "values": ["walk-in", "member", "fleet"],
     "weights": [0.55, 0.35, 0.1],
     "by_segment": {
       "quick fix": [0.75, 0.2, 0.05],
       "major overhaul": [0.35, 0.35, 0.3],
       "e-bike electrical": [0.4, 0.3, 0.3]
     }},
    {"type": "numeric", "name": "promised_days", "integer": true,
     "dist": {"dist": "triangular", "low": 1, "mode": 3, "high": 6},
     "by_segment": {
       "quick fix": {"dist": "triangular", "low": 0, "mode": 0.5, "high": 2},
       "major overhaul": {"dist": "triangular", "low": 4, "mode": 7, "high": 14},
       "e-bike electrical": {"dist": "triangular", "low": 3, "mode": 5, "high": 10}
     }},
    {"type": "numeric", "name": "value_eur",
     "dist": {"dist": "lognormal", "mean": 120, "sd": 50},
     "by_segment": {
       "quick fix": {"dist": "lognormal", "mean": 25, "sd": 10},
       "major overhaul": {"dist": "lognormal", "mean": 450, "sd": 150},
       "e-bike electrical": {"dist": "lognormal", "mean": 320, "sd": 120}
     }},
    {"type": "bool", "name": "express", "p": 0.08,
     "by_segment": {"quick fix": 0.2}}
  ],
  "resources": [
    {"name": "front desk", "capacity": 3,
     "hours": {"days": ["mon", "tue", "wed", "thu", "fri", "sat"], "from": 8, "to": 18}},
    {"name": "mechanic", "capacity": 20,
     "hours": {"days": ["mon", "tue", "wed", "thu", "fri", "sat"], "from": 8, "to": 18}},
    {"name": "senior mechanic", "capacity": 3,
     "hours": {"days": ["mon", "tue", "wed", "thu", "fri"], "from": 8, "to": 18}},
    {"name": "apprentice", "capacity": 3,
     "hours": {"days": ["mon", "tue", "wed", "thu", "fri", "sat"], "from": 8, "to": 18}}
  ],
  "activities": [
    {"name": "Receive bike", "resource": "front desk",
     "duration": {"dist": "triangular", "low": 2, "mode": 4, "high": 8}},
    {"name": "Triage", "resource": "mechanic",
     "duration": {"dist": "triangular", "low": 5, "mode": 8, "high": 15}},
    {"name": "Inspect", "resource": "mechanic",
     "duration": {"dist": "lognormal", "mean": 15, "sd": 6},
     "by_segment": {
       "major overhaul": {"dist": "lognormal", "mean": 30, "sd": 10},
       "e-bike electrical": {"dist": "lognormal", "mean": 20, "sd": 8}
     }},
    {"name": "Fix tyre", "resource": "mechanic", "lifecycle": true,
     "duration": {"dist": "triangular", "low": 8, "mode": 12, "high": 25}},
    {"name": "Quote repair", "resource": "front desk",
     "duration": {"dist": "triangular", "low": 3, "mode": 6, "high": 12}},
    {"name": "Customer approves",
     "duration": {"dist": "lognormal", "mean": 180, "sd": 240},
     "by_segment": {"major overhaul": {"dist": "lognormal", "mean": 480, "sd": 480}}},
    {"name": "Order parts", "resource": "front desk",
     "duration": {"dist": "triangular", "low": 5, "mode": 8, "high": 15}},
    {"name": "Parts arrive",
     "duration": {"dist": "lognormal", "mean": 4320, "sd": 2000},
     "by_segment": {"e-bike electrical": {"dist": "lognormal", "mean": 5760, "sd": 2880}}},
    {"name": "Electrical diagnosis", "resource": "senior mechanic", "lifecycle": true,
     "duration": {"dist": "lognormal", "mean": 50, "sd": 20}},
    {"name": "Repair drivetrain", "resource": "mechanic", "lifecycle": true,
     "duration": {"dist": "lognormal", "mean": 40, "sd": 15},
     "by_segment": {
       "major overhaul": {"dist": "lognormal", "mean": 90, "sd": 30},
       "e-bike electrical": {"dist": "lognormal", "mean": 45, "sd": 20}
     }},
    {"name": "Repair brakes", "resource": "mechanic", "lifecycle": true,
     "duration": {"dist": "lognormal", "mean": 25, "sd": 10},
     "by_segment": {"major overhaul": {"dist": "lognormal", "mean": 45, "sd": 15}}},
    {"name": "True wheel", "resource": "senior mechanic", "lifecycle": true,
     "duration": {"dist": "lognormal", "mean": 35, "sd": 12}},
    {"name": "Test ride", "resource": "mechanic",
     "duration": {"dist": "triangular", "low": 5, "mode": 10, "high": 20}},
    {"name": "Clean", "resource": "apprentice",
     "duration": {"dist": "triangular", "low": 10, "mode": 20, "high": 35}},
    {"name": "Notify customer", "resource": "front desk",
     "duration": {"dist": "triangular", "low": 1, "mode": 3, "high": 6}},
    {"name": "Hand over",
     "duration": {"dist": "lognormal", "mean": 1440, "sd": 1200},
     "by_segment": {"quick fix": {"dist": "lognormal", "mean": 120, "sd": 90}}}
  ],
  "flow": {"sequence": [
    {"step": "Receive bike"},
    {"step": "Inspect"},
    {"choice": [
      {"label": "quick route", "p": 0.05, "by_segment": {"quick fix": 0.95},
       "then": {"sequence": [
         {"step": "Fix tyre"},
         {"choice": [{"label": "quick test ride", "p": 0.5, "then": {"step": "Test ride"}}]}
       ]}},
      {"label": "full route", "p": 0.95, "by_segment": {"quick fix": 0.05},
       "then": {"sequence": [
         {"step": "Quote repair"},
         {"step": "Customer approves"},
         {"choice": [
           {"label": "parts needed", "p": 0.05,
            "by_segment": {"major overhaul": 0.9, "e-bike electrical": 0.15},
            "by_attribute": [{"if": {"attr": "bike_type", "in": ["cargo"]}, "p": 0.7}],
            "then": {"sequence": [{"step": "Order parts"}, {"step": "Parts arrive"}]}}
         ]},
         {"choice": [
           {"label": "electrical", "p": 0.0, "by_segment": {"e-bike electrical": 1.0},
            "by_attribute": [{"if": {"attr": "bike_type", "in": ["e-bike"],
                                     "segment": ["standard service", "major overhaul"]}, "p": 0.2}],
            "then": {"step": "Electrical diagnosis"}}
         ]},
         {"parallel": [
           {"step": "Repair drivetrain"},
           {"sequence": [
             {"step": "Repair brakes"},
             {"choice": [
               {"label": "wheel truing", "p": 0.1,
                "by_segment": {"major overhaul": 0.9, "e-bike electrical": 0.1},
                "then": {"step": "True wheel"}}
             ]}
           ]}
         ]},
         {"loop": {"body": {"step": "Test ride"}, "redo": {"step": "Repair drivetrain"},
                   "p_repeat": 0.08,
                   "by_segment": {"major overhaul": 0.25, "e-bike electrical": 0.2},
                   "max": 3}}
       ]}}
    ]},
    {"parallel": [
      {"choice": [
        {"label": "cleaning", "p": 0.9, "by_segment": {"quick fix": 0.3},
         "by_attribute": [{"if": {"attr": "express", "is": true}, "p": 0.2}],
         "then": {"step": "Clean"}}
      ]},
      {"step": "Notify customer"}
    ]},
    {"step": "Hand over"}
  ]},
  "deviations": [
    {"kind": "skip", "step": "Test ride", "rate": 0.03, "name": "skipped test ride"},
    {"kind": "swap", "first": "Test ride", "second": "Clean", "rate": 0.02,
     "name": "cleaned before test ride"},
    {"kind": "repeat", "step": "Inspect", "rate": 0.01, "name": "inspected twice"}
  ],
  "drift": {
    "at_fraction": 0.5,
    "add_step_after": [{"after": "Receive bike", "step": "Triage"}],
    "duration_factors": {"Parts arrive": 2.0}
  },
  "event_attributes": [
    {"name": "cost_eur", "by_activity": {
      "Fix tyre": {"dist": "lognormal", "mean": 15, "sd": 5},
      "Order parts": {"dist": "lognormal", "mean": 120, "sd": 80},
      "Electrical diagnosis": {"dist": "constant", "value": 45},
      "Repair drivetrain": {"dist": "lognormal", "mean": 70, "sd": 30},
      "Repair brakes": {"dist": "lognormal", "mean": 40, "sd": 15},
      "True wheel": {"dist": "constant", "value": 25}
    }}
  ]
}"#;

/// The bicycle-repair workshop scenario (see the module documentation).
pub fn workshop_scenario() -> ProcessSpec {
    // The text is a constant checked by the tests below, so parsing cannot fail at run time.
    #[allow(clippy::expect_used)]
    ProcessSpec::from_json(WORKSHOP_JSON).expect("the built-in workshop scenario is valid")
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::control::Control;
    use crate::sim::simulate;
    use crate::EventLog;

    #[test]
    fn workshop_parses_and_round_trips() {
        let s = ProcessSpec::from_json(WORKSHOP_JSON).unwrap();
        assert_eq!(s.activities.len(), 16);
        let back = ProcessSpec::from_json(&s.to_json().unwrap()).unwrap();
        assert_eq!(s, back);
        assert_eq!(workshop_scenario(), s);
    }

    /// The planted bottleneck and the slow cases show in the output.
    #[test]
    fn workshop_bottleneck_and_slow_cases_are_visible() {
        let sim = simulate(&workshop_scenario(), 20_000, 3, &Control::new()).unwrap();
        let truth = sim.truth.clone();
        let (log, _) = EventLog::build(sim.input).unwrap();
        let names = log.activity_names();
        let lc = log.lifecycle().unwrap();
        // Per activity with start events: mean time from the latest earlier event of the case
        // to the start (a lower bound of the queueing time).
        let mut wait: std::collections::HashMap<&str, (f64, usize)> = Default::default();
        let parts = names.iter().position(|n| n == "Parts arrive").unwrap() as u32;
        let (mut with_parts, mut without) = ((0.0, 0usize), (0.0, 0usize));
        let mut by_seg = [(0.0, 0usize); 4];
        for c in 0..log.n_cases() {
            let off = log.offsets()[c];
            let times = log.trace_times(c);
            let acts = log.trace(c);
            for i in 1..acts.len() {
                if lc.values.text(off + i) == "start" {
                    let e = wait.entry(names[acts[i] as usize].as_str()).or_default();
                    e.0 += (times[i] - times[i - 1]) as f64 / 3.6e12;
                    e.1 += 1;
                }
            }
            let days = (times[times.len() - 1] - times[0]) as f64 / 8.64e13;
            let slot = if acts.contains(&parts) {
                &mut with_parts
            } else {
                &mut without
            };
            slot.0 += days;
            slot.1 += 1;
            let s = &mut by_seg[truth.segment[c] as usize];
            s.0 += days;
            s.1 += 1;
        }
        let mean = |x: (f64, usize)| x.0 / x.1 as f64;
        let mut w: Vec<(&str, f64)> = wait.iter().map(|(k, v)| (*k, mean(*v))).collect();
        w.sort_by(|a, b| b.1.total_cmp(&a.1));
        let top: Vec<&str> = w.iter().take(2).map(|x| x.0).collect();
        assert!(
            top.contains(&"True wheel") && top.contains(&"Electrical diagnosis"),
            "{w:?}"
        );
        assert!(
            mean(with_parts) > 2.0 * mean(without),
            "{with_parts:?} {without:?}"
        );
        let d: Vec<f64> = by_seg.iter().map(|&x| mean(x)).collect();
        assert!(d[2] > d[1] && d[1] > d[0], "mean days by segment {d:?}");
    }

    #[test]
    fn workshop_log_builds_with_planted_shape() {
        let sim = simulate(&workshop_scenario(), 5_000, 7, &Control::new()).unwrap();
        let n_events = sim.input.case.len();
        let (log, report) = EventLog::build(sim.input).unwrap();
        assert_eq!(report.n_reordered, 0);
        assert_eq!(log.n_cases(), 5_000);
        let per_case = n_events as f64 / 5_000.0;
        assert!(
            (8.0..14.0).contains(&per_case),
            "{per_case} events per case"
        );
        assert_eq!(log.case_name(0), "R000001");
        assert_eq!(sim.truth.segment_names.len(), 4);
        assert_eq!(sim.truth.deviation_names[1], "skipped test ride");
        assert!(log.case_attr("bike_type").is_some());
        assert!(log.event_attr("cost_eur").is_some());
        // The change time is the arrival of the middle case.
        let ct = sim.truth.change_time.unwrap();
        assert_eq!(sim.truth.after_change.iter().filter(|&&b| b).count(), 2_500);
        // Cases arriving after the change have a Triage step, the others none.
        let names = log.activity_names();
        let triage = names.iter().position(|n| n == "Triage").unwrap() as u32;
        for c in 0..log.n_cases() {
            let k: usize = log.case_name(c)[1..].parse::<usize>().unwrap() - 1;
            let has = log.trace(c).contains(&triage);
            assert_eq!(has, sim.truth.after_change[k], "case {k}");
            if has {
                assert!(log.trace_times(c)[0] >= ct);
            }
        }
    }
}
