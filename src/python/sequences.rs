//! Bindings for sequential patterns and episodes (`src/sequences`).

use numpy::IntoPyArray;
use pyo3::prelude::*;
use pyo3::types::PyTuple;

use super::convert::{usize_arr, vec_of};
use super::errors::to_py;
use super::rules::offsets_of;
use super::run::run;
use crate::error::TmError;
use crate::rules::MinSupport;
use crate::sequences::{
    episode_rules, frequent_episodes, prefixspan, EpisodeKind, EpisodeMeasure, EpisodeParams,
    Episodes, EventStreams, PrefixSpanParams, SequenceDb,
};

fn opt_times(obj: Option<Bound<'_, PyAny>>) -> PyResult<Option<Vec<i64>>> {
    match obj {
        Some(o) if !o.is_none() => Ok(Some(vec_of(&o, "times")?)),
        _ => Ok(None),
    }
}

/// PrefixSpan: `(offsets, items, new_element, support, case_offsets, cases, min_count)`.
#[pyfunction]
#[pyo3(signature = (seq_offsets, elem_offsets, items, n_items, times=None, min_count=None, min_fraction=None, max_len=None, max_gap_events=None, max_gap_time=None, min_span=None, max_span=None, closed=false, return_cases=true, max_patterns=10_000_000, progress=None))]
pub fn mine_sequences<'py>(
    py: Python<'py>,
    seq_offsets: Bound<'py, PyAny>,
    elem_offsets: Option<Bound<'py, PyAny>>,
    items: Bound<'py, PyAny>,
    n_items: usize,
    times: Option<Bound<'py, PyAny>>,
    min_count: Option<u64>,
    min_fraction: Option<f64>,
    max_len: Option<usize>,
    max_gap_events: Option<usize>,
    max_gap_time: Option<i64>,
    min_span: Option<i64>,
    max_span: Option<i64>,
    closed: bool,
    return_cases: bool,
    max_patterns: usize,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyTuple>> {
    let so = offsets_of(&seq_offsets, "seq_offsets")?;
    let eo = match elem_offsets {
        Some(o) if !o.is_none() => Some(offsets_of(&o, "elem_offsets")?),
        _ => None,
    };
    let it: Vec<u32> = vec_of(&items, "items")?;
    let tm = opt_times(times)?;
    let min_support = match (min_count, min_fraction) {
        (Some(c), None) => MinSupport::Count(c),
        (None, Some(f)) => MinSupport::Fraction(f),
        _ => {
            return Err(to_py(TmError::param(
                "min_support",
                "give exactly one of a count and a fraction",
            )))
        }
    };
    let p = PrefixSpanParams {
        min_support,
        max_len,
        max_gap_events,
        max_gap_time,
        min_span,
        max_span,
        closed,
        return_cases,
        max_patterns,
    };
    let r = run(py, progress, move |ctl| {
        let db = match eo {
            Some(eo) => SequenceDb::new(so, eo, it, tm, n_items)?,
            None => SequenceDb::from_items(so, it, tm, n_items)?,
        };
        prefixspan(&db, &p, ctl)
    })?;
    PyTuple::new(
        py,
        [
            usize_arr(py, &r.offsets).into_any(),
            r.items.into_pyarray(py).into_any(),
            r.new_element.into_pyarray(py).into_any(),
            r.support.into_pyarray(py).into_any(),
            usize_arr(py, &r.case_offsets).into_any(),
            r.cases.into_pyarray(py).into_any(),
            r.min_count.into_pyobject(py)?.into_any(),
        ],
    )
}

fn kind_of(s: &str) -> Result<EpisodeKind, TmError> {
    match s {
        "serial" => Ok(EpisodeKind::Serial),
        "parallel" => Ok(EpisodeKind::Parallel),
        _ => Err(TmError::param(
            "kind",
            format!("kind must be 'serial' or 'parallel'; got {s:?}"),
        )),
    }
}

fn measure_of(s: &str) -> Result<EpisodeMeasure, TmError> {
    match s {
        "winepi" => Ok(EpisodeMeasure::Winepi),
        "minepi" => Ok(EpisodeMeasure::Minepi),
        _ => Err(TmError::param(
            "measure",
            format!("measure must be 'winepi' or 'minepi'; got {s:?}"),
        )),
    }
}

/// Frequent episodes: `(offsets, types, frequency, windows, minimal_occurrences, n_windows)`.
#[pyfunction]
#[pyo3(signature = (offsets, types, times, n_types, window, kind="serial", measure="winepi", min_frequency=0.1, max_size=4, max_episodes=1_000_000, progress=None))]
pub fn mine_episodes<'py>(
    py: Python<'py>,
    offsets: Bound<'py, PyAny>,
    types: Bound<'py, PyAny>,
    times: Bound<'py, PyAny>,
    n_types: usize,
    window: i64,
    kind: &str,
    measure: &str,
    min_frequency: f64,
    max_size: usize,
    max_episodes: usize,
    progress: Option<Py<PyAny>>,
) -> PyResult<Bound<'py, PyTuple>> {
    let off = offsets_of(&offsets, "offsets")?;
    let ty: Vec<u32> = vec_of(&types, "types")?;
    let tm: Vec<i64> = vec_of(&times, "times")?;
    let p = EpisodeParams {
        kind: kind_of(kind).map_err(to_py)?,
        window,
        measure: measure_of(measure).map_err(to_py)?,
        min_frequency,
        max_size,
        max_episodes,
    };
    let e = run(py, progress, move |ctl| {
        let st = EventStreams::new(off, ty, tm, n_types)?;
        frequent_episodes(&st, &p, ctl)
    })?;
    PyTuple::new(
        py,
        [
            usize_arr(py, &e.offsets).into_any(),
            e.types.into_pyarray(py).into_any(),
            e.frequency.into_pyarray(py).into_any(),
            e.windows.into_pyarray(py).into_any(),
            e.minimal_occurrences.into_pyarray(py).into_any(),
            e.n_windows.into_pyobject(py)?.into_any(),
        ],
    )
}

/// Episode rules: `(antecedent index, consequent index, confidence)` arrays.
#[pyfunction]
pub fn mine_episode_rules<'py>(
    py: Python<'py>,
    offsets: Bound<'py, PyAny>,
    types: Bound<'py, PyAny>,
    windows: Bound<'py, PyAny>,
    minimal_occurrences: Bound<'py, PyAny>,
    measure: &str,
    min_confidence: f64,
) -> PyResult<Bound<'py, PyTuple>> {
    let off = offsets_of(&offsets, "offsets")?;
    let e = Episodes {
        types: vec_of(&types, "types")?,
        windows: vec_of(&windows, "windows")?,
        minimal_occurrences: vec_of(&minimal_occurrences, "minimal_occurrences")?,
        frequency: Vec::new(),
        offsets: off,
        n_windows: 0.0,
    };
    if e.offsets.len() != e.windows.len() + 1
        || e.minimal_occurrences.len() != e.windows.len()
        || e.offsets.last() != Some(&e.types.len())
        || e.offsets.windows(2).any(|w| w[1] < w[0])
    {
        return Err(to_py(TmError::param(
            "episodes",
            "the episode arrays are inconsistent",
        )));
    }
    let m = measure_of(measure).map_err(to_py)?;
    let r = run(py, None, move |_| episode_rules(&e, m, min_confidence))?;
    let a: Vec<u32> = r.iter().map(|x| x.0).collect();
    let b: Vec<u32> = r.iter().map(|x| x.1).collect();
    let c: Vec<f64> = r.iter().map(|x| x.2).collect();
    PyTuple::new(
        py,
        [
            a.into_pyarray(py).into_any(),
            b.into_pyarray(py).into_any(),
            c.into_pyarray(py).into_any(),
        ],
    )
}
