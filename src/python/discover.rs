//! Bindings for discovery and conformance (`tracemill.discover`, `tracemill.conform`,
//! `tracemill.models`). Nets and trees cross the boundary as tuples of plain lists (they are
//! small); per-variant results come back as numpy arrays.

use std::sync::Arc;

use numpy::{IntoPyArray, PyArray1};
use pyo3::prelude::*;

use super::errors::to_py;
use super::log::PyLog;
use super::run::run;
use crate::conform::align::{align_log, AlignParams};
use crate::conform::precision::{etc_precision, simplicity};
use crate::conform::replay::{replay_log, ReplayParams};
use crate::discover::alpha::alpha_net;
use crate::discover::dependency::{dependency_graph, DependencyParams};
use crate::discover::dfg::{directly_follows_graph, DfgParams};
use crate::discover::inductive::{inductive_tree, InductiveParams};
use crate::discover::petri::{NetArc, PetriNet, Transition};
use crate::discover::tree::{NodeKind, ProcessTree};
use crate::error::TmError;
use crate::io::bpmn::tree_to_bpmn;
use crate::io::pnml::{read_pnml_net, write_pnml};

/// `(places, transition names, labels, arc place, arc transition, arc into-transition, arc
/// weight, initial marking, final marking)`.
type NetSpec = (
    Vec<String>,
    Vec<String>,
    Vec<Option<String>>,
    Vec<i64>,
    Vec<i64>,
    Vec<bool>,
    Vec<i64>,
    Vec<i64>,
    Vec<i64>,
);

/// `(kind codes, parent indices, labels)`.
type TreeSpec = (Vec<u8>, Vec<i64>, Vec<String>);

fn u32_of(v: i64, what: &str) -> Result<u32, TmError> {
    u32::try_from(v).map_err(|_| {
        TmError::data(format!(
            "{what} must be a non-negative integer below 2^32; got {v}"
        ))
    })
}

fn net_from(s: NetSpec) -> Result<PetriNet, TmError> {
    let (places, names, labels, ap, at, ai, aw, init, fin) = s;
    if names.len() != labels.len() {
        return Err(TmError::data(
            "transition names and labels differ in length",
        ));
    }
    let n = ap.len();
    if at.len() != n || ai.len() != n || aw.len() != n {
        return Err(TmError::data("arc arrays differ in length"));
    }
    let mut arcs = Vec::with_capacity(n);
    for k in 0..n {
        arcs.push(NetArc {
            place: u32_of(ap[k], "arc place")? as usize,
            transition: u32_of(at[k], "arc transition")? as usize,
            into_transition: ai[k],
            weight: u32_of(aw[k], "arc weight")?,
        });
    }
    let net = PetriNet {
        places,
        transitions: names
            .into_iter()
            .zip(labels)
            .map(|(name, label)| Transition { name, label })
            .collect(),
        arcs,
        initial_marking: init
            .iter()
            .map(|&x| u32_of(x, "initial marking"))
            .collect::<Result<_, _>>()?,
        final_marking: fin
            .iter()
            .map(|&x| u32_of(x, "final marking"))
            .collect::<Result<_, _>>()?,
    };
    net.validate()?;
    Ok(net)
}

fn net_to(n: &PetriNet) -> NetSpec {
    (
        n.places.clone(),
        n.transitions.iter().map(|t| t.name.clone()).collect(),
        n.transitions.iter().map(|t| t.label.clone()).collect(),
        n.arcs.iter().map(|a| a.place as i64).collect(),
        n.arcs.iter().map(|a| a.transition as i64).collect(),
        n.arcs.iter().map(|a| a.into_transition).collect(),
        n.arcs.iter().map(|a| i64::from(a.weight)).collect(),
        n.initial_marking.iter().map(|&x| i64::from(x)).collect(),
        n.final_marking.iter().map(|&x| i64::from(x)).collect(),
    )
}

fn tree_to(t: &ProcessTree) -> TreeSpec {
    (
        t.nodes.iter().map(|n| n.kind.code()).collect(),
        t.parents(),
        t.nodes
            .iter()
            .map(|n| match &n.kind {
                NodeKind::Activity(a) => a.clone(),
                _ => String::new(),
            })
            .collect(),
    )
}

fn tree_from(s: TreeSpec) -> Result<ProcessTree, TmError> {
    ProcessTree::from_arrays(&s.0, &s.1, &s.2)
}

/// Directly-follows graph: `(kept, activity_count, start, end, source, target, count, cases,
/// mean, median, p90, n_cases)`.
#[pyfunction]
#[pyo3(signature = (log, min_activity_count=0, min_edge_count=0, path_coverage=1.0, performance=true, progress=None))]
#[allow(clippy::type_complexity)]
pub fn dfg<'py>(
    py: Python<'py>,
    log: &PyLog,
    min_activity_count: u64,
    min_edge_count: u64,
    path_coverage: f64,
    performance: bool,
    progress: Option<Py<PyAny>>,
) -> PyResult<(
    Bound<'py, PyArray1<bool>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    u64,
)> {
    let l = Arc::clone(&log.inner);
    let p = DfgParams {
        min_activity_count,
        min_edge_count,
        path_coverage,
        performance,
    };
    let g = run(py, progress, move |ctl| directly_follows_graph(&l, &p, ctl))?;
    Ok((
        g.kept.into_pyarray(py),
        g.activity_count.into_pyarray(py),
        g.start.into_pyarray(py),
        g.end.into_pyarray(py),
        g.source.into_pyarray(py),
        g.target.into_pyarray(py),
        g.count.into_pyarray(py),
        g.cases.into_pyarray(py),
        g.mean_gap.into_pyarray(py),
        g.median_gap.into_pyarray(py),
        g.p90_gap.into_pyarray(py),
        g.n_cases,
    ))
}

/// Dependency graph: `(follows, dependency, loop2, edge_source, edge_target, activity_count,
/// start, end)`; matrices flattened row-major.
#[pyfunction]
#[pyo3(signature = (log, dependency_threshold, min_observations, relative_to_best, loop1_threshold, loop2_threshold, all_connected))]
#[allow(clippy::type_complexity)]
pub fn dependency<'py>(
    py: Python<'py>,
    log: &PyLog,
    dependency_threshold: f64,
    min_observations: u64,
    relative_to_best: f64,
    loop1_threshold: f64,
    loop2_threshold: f64,
    all_connected: bool,
) -> PyResult<(
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<f64>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
)> {
    let l = Arc::clone(&log.inner);
    let p = DependencyParams {
        dependency_threshold,
        min_observations,
        relative_to_best,
        loop1_threshold,
        loop2_threshold,
        all_connected,
    };
    let g = run(py, None, move |_| dependency_graph(&l, &p))?;
    let (s, t): (Vec<u32>, Vec<u32>) = g.edges.iter().copied().unzip();
    Ok((
        g.follows.into_pyarray(py),
        g.dependency.into_pyarray(py),
        g.loop2.into_pyarray(py),
        s.into_pyarray(py),
        t.into_pyarray(py),
        g.activity_count.into_pyarray(py),
        g.start.into_pyarray(py),
        g.end.into_pyarray(py),
    ))
}

/// The alpha algorithm's net.
#[pyfunction]
#[pyo3(signature = (log, max_candidates=100_000))]
pub fn alpha(py: Python<'_>, log: &PyLog, max_candidates: usize) -> PyResult<NetSpec> {
    let l = Arc::clone(&log.inner);
    let n = run(py, None, move |_| alpha_net(&l, max_candidates))?;
    Ok(net_to(&n))
}

/// Inductive discovery: the process tree.
#[pyfunction]
#[pyo3(signature = (log, noise_threshold=0.0, progress=None))]
pub fn inductive(
    py: Python<'_>,
    log: &PyLog,
    noise_threshold: f64,
    progress: Option<Py<PyAny>>,
) -> PyResult<TreeSpec> {
    let l = Arc::clone(&log.inner);
    let p = InductiveParams { noise_threshold };
    let t = run(py, progress, move |ctl| inductive_tree(&l, &p, ctl))?;
    Ok(tree_to(&t))
}

/// Translate a process tree into a workflow net.
#[pyfunction]
pub fn tree_net(tree: TreeSpec) -> PyResult<NetSpec> {
    let t = tree_from(tree).map_err(to_py)?;
    Ok(net_to(&t.to_petri_net()))
}

/// Text form of a process tree.
#[pyfunction]
pub fn tree_text(tree: TreeSpec) -> PyResult<String> {
    Ok(tree_from(tree).map_err(to_py)?.to_string())
}

/// BPMN 2.0 XML of a process tree.
#[pyfunction]
pub fn tree_bpmn(tree: TreeSpec, name: &str) -> PyResult<String> {
    Ok(tree_to_bpmn(&tree_from(tree).map_err(to_py)?, name))
}

/// Parse PNML text: the net with id `net`, or the only one.
#[pyfunction]
#[pyo3(signature = (text, net=None))]
pub fn pnml_read(py: Python<'_>, text: String, net: Option<String>) -> PyResult<NetSpec> {
    let n = run(py, None, move |_| read_pnml_net(&text, net.as_deref()))?;
    Ok(net_to(&n))
}

/// PNML text of a net.
#[pyfunction]
pub fn pnml_write(net: NetSpec, name: &str) -> PyResult<String> {
    let n = net_from(net).map_err(to_py)?;
    write_pnml(&n, name).map_err(to_py)
}

/// Validate a net; returns the workflow-net `(source, sink)` or `(-1, -1)`.
#[pyfunction]
pub fn net_check(net: NetSpec) -> PyResult<(i64, i64)> {
    let n = net_from(net).map_err(to_py)?;
    Ok(n.workflow_ends()
        .map_or((-1, -1), |(a, b)| (a as i64, b as i64)))
}

/// Token replay: `(produced, consumed, missing, remaining, unmatched, lacking_offsets,
/// lacking_transition, lacking_tokens, case_variant, counts, totals, fitness)`.
#[pyfunction]
#[pyo3(signature = (net, log, max_silent_states=10_000, progress=None))]
#[allow(clippy::type_complexity)]
pub fn replay<'py>(
    py: Python<'py>,
    net: NetSpec,
    log: &PyLog,
    max_silent_states: usize,
    progress: Option<Py<PyAny>>,
) -> PyResult<(
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<i64>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u64>>,
    (u64, u64, u64, u64),
    f64,
)> {
    let n = net_from(net).map_err(to_py)?;
    let l = Arc::clone(&log.inner);
    let p = ReplayParams {
        max_silent_states,
        ..Default::default()
    };
    let r = run(py, progress, move |ctl| replay_log(&n, &l, &p, ctl))?;
    let mut off = vec![0i64];
    let (mut lt, mut lk) = (Vec::new(), Vec::new());
    for v in &r.variants {
        for &(t, k) in &v.lacking {
            lt.push(t);
            lk.push(k);
        }
        off.push(lt.len() as i64);
    }
    let col = |f: fn(&crate::conform::replay::TraceReplay) -> u64| -> Vec<u64> {
        r.variants.iter().map(f).collect()
    };
    Ok((
        col(|v| v.produced).into_pyarray(py),
        col(|v| v.consumed).into_pyarray(py),
        col(|v| v.missing).into_pyarray(py),
        col(|v| v.remaining).into_pyarray(py),
        col(|v| v.unmatched).into_pyarray(py),
        off.into_pyarray(py),
        lt.into_pyarray(py),
        lk.into_pyarray(py),
        r.case_variant.clone().into_pyarray(py),
        r.counts.clone().into_pyarray(py),
        r.totals,
        r.fitness,
    ))
}

/// Alignments: `(cost (-1 = none), gave_up, expanded, move_offsets, move_kind, move_event,
/// move_transition, case_variant, counts, lengths, model_run_cost, fitness,
/// mean_trace_fitness, n_gave_up_cases)`.
#[pyfunction]
#[pyo3(signature = (net, log, max_states=200_000, progress=None))]
#[allow(clippy::type_complexity)]
pub fn align<'py>(
    py: Python<'py>,
    net: NetSpec,
    log: &PyLog,
    max_states: usize,
    progress: Option<Py<PyAny>>,
) -> PyResult<(
    Bound<'py, PyArray1<i64>>,
    Bound<'py, PyArray1<bool>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<i64>>,
    Bound<'py, PyArray1<u8>>,
    Bound<'py, PyArray1<i32>>,
    Bound<'py, PyArray1<i32>>,
    Bound<'py, PyArray1<u32>>,
    Bound<'py, PyArray1<u64>>,
    Bound<'py, PyArray1<u64>>,
    (u64, f64, f64, u64),
)> {
    let n = net_from(net).map_err(to_py)?;
    let l = Arc::clone(&log.inner);
    let p = AlignParams {
        max_states,
        ..Default::default()
    };
    let r = run(py, progress, move |ctl| align_log(&n, &l, &p, ctl))?;
    let mut off = vec![0i64];
    let (mut mk, mut me, mut mt) = (Vec::new(), Vec::new(), Vec::new());
    for v in &r.variants {
        for m in &v.moves {
            mk.push(m.kind.code());
            me.push(m.event);
            mt.push(m.transition);
        }
        off.push(mk.len() as i64);
    }
    let cost: Vec<i64> = r
        .variants
        .iter()
        .map(|v| v.cost.map_or(-1, |c| c as i64))
        .collect();
    Ok((
        cost.into_pyarray(py),
        r.variants
            .iter()
            .map(|v| v.gave_up)
            .collect::<Vec<_>>()
            .into_pyarray(py),
        r.variants
            .iter()
            .map(|v| v.expanded)
            .collect::<Vec<_>>()
            .into_pyarray(py),
        off.into_pyarray(py),
        mk.into_pyarray(py),
        me.into_pyarray(py),
        mt.into_pyarray(py),
        r.case_variant.clone().into_pyarray(py),
        r.counts.clone().into_pyarray(py),
        r.lengths.clone().into_pyarray(py),
        (
            r.model_run_cost,
            r.fitness,
            r.mean_trace_fitness,
            r.n_gave_up_cases,
        ),
    ))
}

/// Escaping-edges precision: `(precision, escaping, allowed, n_states)`.
#[pyfunction]
#[pyo3(signature = (net, log, max_silent_states=10_000))]
pub fn precision(
    py: Python<'_>,
    net: NetSpec,
    log: &PyLog,
    max_silent_states: usize,
) -> PyResult<(f64, u64, u64, usize)> {
    let n = net_from(net).map_err(to_py)?;
    let l = Arc::clone(&log.inner);
    let p = run(py, None, move |ctl| {
        etc_precision(&n, &l, max_silent_states, ctl)
    })?;
    Ok((p.precision, p.escaping, p.allowed, p.n_states))
}

/// Inverse-arc-degree simplicity.
#[pyfunction]
pub fn net_simplicity(net: NetSpec) -> PyResult<f64> {
    Ok(simplicity(&net_from(net).map_err(to_py)?))
}

/// Register the functions of this module.
pub fn register(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(dfg, m)?)?;
    m.add_function(wrap_pyfunction!(dependency, m)?)?;
    m.add_function(wrap_pyfunction!(alpha, m)?)?;
    m.add_function(wrap_pyfunction!(inductive, m)?)?;
    m.add_function(wrap_pyfunction!(tree_net, m)?)?;
    m.add_function(wrap_pyfunction!(tree_text, m)?)?;
    m.add_function(wrap_pyfunction!(tree_bpmn, m)?)?;
    m.add_function(wrap_pyfunction!(pnml_read, m)?)?;
    m.add_function(wrap_pyfunction!(pnml_write, m)?)?;
    m.add_function(wrap_pyfunction!(net_check, m)?)?;
    m.add_function(wrap_pyfunction!(replay, m)?)?;
    m.add_function(wrap_pyfunction!(align, m)?)?;
    m.add_function(wrap_pyfunction!(precision, m)?)?;
    m.add_function(wrap_pyfunction!(net_simplicity, m)?)?;
    Ok(())
}
