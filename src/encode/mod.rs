//! Trace encodings: from the cases of an event log to feature vectors.
//!
//! Clustering cases needs one vector per case. The profiles here follow the trace-clustering
//! literature (Song, Günther and van der Aalst 2008, "Trace clustering in process mining", BPM
//! Workshops, LNBIP 17), where each *profile* looks at one aspect of a case:
//!
//! * **activity profile** – how often each activity occurs in the case (bag of activities);
//! * **transition profile** – how often each directly-follows pair `(a, b)` occurs;
//! * **n-gram profile** – contiguous activity sequences of length `n_min..=n_max`, with a
//!   vocabulary limited to the most frequent ones (a generalisation of the two above);
//! * **performance profile** – duration, length, waiting times and the time spent per activity
//!   (see [`performance_profile`]).
//!
//! Count profiles are sparse: a case touches few of all possible activities or pairs, so they
//! are built straight into compressed sparse rows ([`Csr`]: `indptr`, `indices`, `data`, the
//! layout of `scipy.sparse.csr_matrix`). Cases are processed in parallel chunks and the chunks
//! are stitched in case order, so the output does not depend on the number of threads.
//!
//! **Fitting and applying.** A profile is *fitted* on one log (its vocabulary: the activities or
//! n-grams that become columns) and *applied* to any log. Activities are matched by name through
//! a code map (`map[code in this log] = code in the fitted vocabulary`, or [`UNSEEN`]); n-grams
//! that contain an unseen activity are skipped and the events of unseen activities are counted,
//! so that the caller can warn.
//!
//! **Weights.** Counts can be replaced by presence (binary) and multiplied by inverse document
//! frequencies (`idf[j] = ln((1 + n) / (1 + df_j)) + 1`, the smoothed form of scikit-learn's
//! `TfidfTransformer`), then rows scaled to unit L1 or L2 norm (Salton and Buckley 1988,
//! "Term-weighting approaches in automatic text retrieval", Inf. Process. Manag. 24(5)).
//!
//! ```
//! use tracemill::encode::{ngram_fit, ngram_transform, NgramOptions};
//! use tracemill::log::{EventLog, LogInput};
//! let input = LogInput::new(
//!     vec![0, 0, 0, 1, 1], vec!["c1".into(), "c2".into()],
//!     vec![0, 1, 0, 0, 1], vec!["a".into(), "b".into()],
//!     vec![1, 2, 3, 1, 2],
//! );
//! let (log, _) = EventLog::build(input).unwrap();
//! let map = vec![0, 1];
//! let vocab = ngram_fit(&log, &map, 2, 2, 2, None, &Default::default()).unwrap();
//! assert_eq!(vocab.len(), 2); // (a, b) and (b, a)
//! let (x, unseen) = ngram_transform(&log, &map, 2, &vocab, &NgramOptions::default(),
//!     &Default::default()).unwrap();
//! assert_eq!(x.indptr, vec![0, 2, 3]);
//! assert_eq!(unseen, 0);
//! ```

use rayon::prelude::*;

use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::log::EventLog;

/// Marker in a code map for an activity that the fitted vocabulary does not know.
pub const UNSEEN: u32 = u32::MAX;

/// Cases per parallel chunk.
const CHUNK: usize = 4096;

/// A compressed-sparse-row matrix of `f64` (the layout of `scipy.sparse.csr_matrix`).
#[derive(Debug, Clone, PartialEq)]
pub struct Csr {
    /// Number of rows.
    pub n_rows: usize,
    /// Number of columns.
    pub n_cols: usize,
    /// Row offsets into `indices`/`data` (`n_rows + 1` entries).
    pub indptr: Vec<i64>,
    /// Column of each stored value, ascending within a row.
    pub indices: Vec<i32>,
    /// The stored values.
    pub data: Vec<f64>,
}

impl Csr {
    /// The matrix as a dense row-major array.
    pub fn to_dense(&self) -> Vec<f64> {
        let mut out = vec![0.0; self.n_rows * self.n_cols];
        for r in 0..self.n_rows {
            for p in self.indptr[r] as usize..self.indptr[r + 1] as usize {
                out[r * self.n_cols + self.indices[p] as usize] = self.data[p];
            }
        }
        out
    }

    /// Stitch row blocks (each `(row lengths, indices, data)`) in order; the blocks are
    /// copied into place in parallel.
    fn from_blocks(blocks: Vec<(Vec<u32>, Vec<i32>, Vec<f64>)>, n_cols: usize) -> Csr {
        let n_rows: usize = blocks.iter().map(|b| b.0.len()).sum();
        let nnz: usize = blocks.iter().map(|b| b.1.len()).sum();
        let mut indptr = Vec::with_capacity(n_rows + 1);
        let mut acc = 0i64;
        indptr.push(0);
        for (lens, _, _) in &blocks {
            for &l in lens {
                acc += i64::from(l);
                indptr.push(acc);
            }
        }
        let mut indices = vec![0i32; nnz];
        let mut data = vec![0.0f64; nnz];
        let mut jobs = Vec::with_capacity(blocks.len());
        let (mut ri, mut rd) = (&mut indices[..], &mut data[..]);
        for blk in &blocks {
            let (hi, ti) = ri.split_at_mut(blk.1.len());
            let (hd, td) = rd.split_at_mut(blk.2.len());
            jobs.push((hi, hd, blk));
            (ri, rd) = (ti, td);
        }
        jobs.into_par_iter().for_each(|(oi, od, blk)| {
            oi.copy_from_slice(&blk.1);
            od.copy_from_slice(&blk.2);
        });
        Csr {
            n_rows,
            n_cols,
            indptr,
            indices,
            data,
        }
    }
}

/// A borrowed CSR matrix, an operand of [`hstack`].
#[derive(Debug, Clone, Copy)]
pub struct CsrView<'a> {
    /// Row offsets (`n_rows + 1`).
    pub indptr: &'a [i64],
    /// Column indices.
    pub indices: &'a [i32],
    /// Values.
    pub data: &'a [f64],
    /// Number of columns.
    pub n_cols: usize,
}

/// The columns of `parts` side by side (`scipy.sparse.hstack`), the values of part `p`
/// multiplied by `weights[p]`. Every part has `n_rows` rows; rows are copied in parallel
/// chunks. Errors name the part whose arrays are inconsistent.
pub fn hstack(parts: &[CsrView<'_>], weights: &[f64], n_rows: usize) -> TmResult<Csr> {
    if weights.len() != parts.len() {
        return Err(TmError::param(
            "weights",
            format!("{} weights for {} parts", weights.len(), parts.len()),
        ));
    }
    for (q, p) in parts.iter().enumerate() {
        let ok = p.indptr.len() == n_rows + 1
            && p.indptr[0] == 0
            && p.indptr.windows(2).all(|w| w[0] <= w[1])
            && p.indptr[n_rows] as usize == p.indices.len()
            && p.indices.len() == p.data.len();
        if !ok {
            return Err(TmError::param(
                "profiles",
                format!(
                    "part {q} is not a consistent CSR matrix with {n_rows} rows (indptr, \
                     indices and data disagree)"
                ),
            ));
        }
        if let Some(&c) = p
            .indices
            .par_iter()
            .find_any(|&&c| c < 0 || c as usize >= p.n_cols)
        {
            return Err(TmError::param(
                "profiles",
                format!("part {q} has column index {c} outside 0..{}", p.n_cols),
            ));
        }
    }
    let mut offset = Vec::with_capacity(parts.len());
    let mut n_cols = 0usize;
    for p in parts {
        offset.push(i32::try_from(n_cols).map_err(|_| TmError::Limit {
            message: "the stacked matrix would have more than 2^31 columns".into(),
        })?);
        n_cols += p.n_cols;
    }
    let mut indptr = vec![0i64; n_rows + 1];
    indptr[1..]
        .par_iter_mut()
        .with_min_len(CHUNK)
        .enumerate()
        .for_each(|(r, v)| *v = parts.iter().map(|p| p.indptr[r + 1]).sum());
    let nnz = indptr[n_rows] as usize;
    let mut indices = vec![0i32; nnz];
    let mut data = vec![0.0f64; nnz];
    let mut jobs = Vec::with_capacity(n_rows.div_ceil(CHUNK));
    let (mut ri, mut rd) = (&mut indices[..], &mut data[..]);
    for s in (0..n_rows).step_by(CHUNK) {
        let e = (s + CHUNK).min(n_rows);
        let len = (indptr[e] - indptr[s]) as usize;
        let (hi, ti) = ri.split_at_mut(len);
        let (hd, td) = rd.split_at_mut(len);
        jobs.push((s, e, hi, hd));
        (ri, rd) = (ti, td);
    }
    jobs.into_par_iter().for_each(|(s, e, oi, od)| {
        let mut q = 0;
        for r in s..e {
            for ((p, &off), &w) in parts.iter().zip(&offset).zip(weights) {
                let (a, b) = (p.indptr[r] as usize, p.indptr[r + 1] as usize);
                for t in a..b {
                    oi[q] = p.indices[t] + off;
                    od[q] = p.data[t] * w;
                    q += 1;
                }
            }
        }
    });
    Ok(Csr {
        n_rows,
        n_cols,
        indptr,
        indices,
        data,
    })
}

pub(crate) use crate::hash::FxMap;

/// A fitted n-gram vocabulary: the n-grams that become columns, in column order, as codes of
/// the fitted activity list.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct NgramVocab {
    /// CSR offsets into `codes` (`len + 1` entries).
    pub offsets: Vec<usize>,
    /// Concatenated activity codes of the n-grams.
    pub codes: Vec<u32>,
    /// Number of cases containing each n-gram in the fitted log (document frequency).
    pub df: Vec<u64>,
}

impl NgramVocab {
    /// Number of n-grams.
    pub fn len(&self) -> usize {
        self.offsets.len().saturating_sub(1)
    }
    /// Whether the vocabulary is empty.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
    /// The codes of n-gram `j`.
    pub fn gram(&self, j: usize) -> &[u32] {
        &self.codes[self.offsets[j]..self.offsets[j + 1]]
    }
}

/// Row normalisation after weighting.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Norm {
    /// Keep the weighted counts.
    #[default]
    None,
    /// Divide each row by the sum of its absolute values.
    L1,
    /// Divide each row by its Euclidean norm.
    L2,
}

impl Norm {
    /// Parse `"none"`, `"l1"` or `"l2"`.
    pub fn parse(s: &str) -> TmResult<Norm> {
        match s {
            "none" => Ok(Norm::None),
            "l1" => Ok(Norm::L1),
            "l2" => Ok(Norm::L2),
            _ => Err(TmError::param(
                "norm",
                format!("norm must be None, 'l1' or 'l2'; got '{s}'"),
            )),
        }
    }
}

/// How [`ngram_transform`] weights the counts.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NgramOptions {
    /// Presence (1.0) instead of counts.
    pub binary: bool,
    /// Per-column factors (inverse document frequencies), one per vocabulary entry.
    pub idf: Option<Vec<f64>>,
    /// Row normalisation.
    pub norm: Norm,
}

fn bits_for(n_ref: usize) -> u32 {
    64 - (n_ref as u64 + 1).leading_zeros()
}

fn check_n(n_min: usize, n_max: usize, n_ref: usize) -> TmResult<u32> {
    if n_min == 0 || n_max < n_min {
        return Err(TmError::param(
            "n",
            format!(
                "n-gram lengths must satisfy 1 <= n_min <= n_max; got n_min={n_min}, n_max={n_max}"
            ),
        ));
    }
    let bits = bits_for(n_ref);
    if n_max as u32 * bits > 64 {
        return Err(TmError::param(
            "n",
            format!(
                "n-grams up to length {n_max} over {n_ref} activities do not fit a 64-bit key; \
                 the longest supported length is {}",
                64 / bits
            ),
        ));
    }
    Ok(bits)
}

fn check_map(log: &EventLog, map: &[u32], n_ref: usize) -> TmResult<()> {
    let na = log.activity_names().len();
    if map.len() != na {
        return Err(TmError::param(
            "map",
            format!(
                "the activity code map has {} entries but the log has {na} activities",
                map.len()
            ),
        ));
    }
    if let Some(&bad) = map.iter().find(|&&c| c != UNSEEN && c as usize >= n_ref) {
        return Err(TmError::param(
            "map",
            format!("activity code map entry {bad} is outside the fitted vocabulary of {n_ref}"),
        ));
    }
    Ok(())
}

/// Call `f(key)` for every n-gram of `trace` (mapped) with length in `n_min..=n_max` that has
/// no unseen activity. Keys pack `code + 1` in `bits`-bit fields, so lengths stay distinct.
#[inline]
fn for_each_gram(
    trace: &[u32],
    map: &[u32],
    n_min: usize,
    n_max: usize,
    bits: u32,
    mut f: impl FnMut(u64),
) {
    let len = trace.len();
    for s in 0..len {
        let mut key = 0u64;
        for (l, &a) in trace[s..len.min(s + n_max)].iter().enumerate() {
            let c = map[a as usize];
            if c == UNSEEN {
                break;
            }
            key = (key << bits) | (u64::from(c) + 1);
            if l + 1 >= n_min {
                f(key);
            }
        }
    }
}

fn unpack(mut key: u64, bits: u32) -> Vec<u32> {
    let mask = (1u64 << bits) - 1;
    let mut out = Vec::new();
    while key != 0 {
        out.push(((key & mask) - 1) as u32);
        key >>= bits;
    }
    out.reverse();
    out
}

fn pack(gram: &[u32], bits: u32) -> u64 {
    gram.iter()
        .fold(0u64, |k, &c| (k << bits) | (u64::from(c) + 1))
}

/// Fit an n-gram vocabulary on `log`: every n-gram of length `n_min..=n_max` over the mapped
/// activities (`n_ref` of them), ranked by total count (ties: shorter first, then by codes),
/// cut to `max_features`, then put in (length, codes) order.
pub fn ngram_fit(
    log: &EventLog,
    map: &[u32],
    n_ref: usize,
    n_min: usize,
    n_max: usize,
    max_features: Option<usize>,
    ctl: &Control,
) -> TmResult<NgramVocab> {
    check_map(log, map, n_ref)?;
    let bits = check_n(n_min, n_max, n_ref)?;
    let n = log.n_cases();
    ctl.set_total(n as u64);
    let chunks: Vec<(usize, usize)> = (0..n)
        .step_by(CHUNK)
        .map(|s| (s, (s + CHUNK).min(n)))
        .collect();
    if n_min == 2 && n_max == 2 && n_ref * n_ref <= 1 << 16 {
        return pair_fit(log, map, n_ref, max_features, &chunks, ctl);
    }
    // Per chunk: key -> (count, document frequency).
    let partial: Vec<TmResult<FxMap<u64, (u64, u64)>>> = chunks
        .par_iter()
        .map(|&(s, e)| {
            ctl.check()?;
            let mut m: FxMap<u64, (u64, u64)> = FxMap::default();
            let mut seen: Vec<u64> = Vec::new();
            for c in s..e {
                seen.clear();
                for_each_gram(log.trace(c), map, n_min, n_max, bits, |k| seen.push(k));
                seen.sort_unstable();
                let mut i = 0;
                while i < seen.len() {
                    let mut j = i + 1;
                    while j < seen.len() && seen[j] == seen[i] {
                        j += 1;
                    }
                    let ent = m.entry(seen[i]).or_insert((0, 0));
                    ent.0 += (j - i) as u64;
                    ent.1 += 1;
                    i = j;
                }
            }
            ctl.advance((e - s) as u64);
            Ok(m)
        })
        .collect();
    let mut total: FxMap<u64, (u64, u64)> = FxMap::default();
    for p in partial {
        for (k, (c, d)) in p? {
            let ent = total.entry(k).or_insert((0, 0));
            ent.0 += c;
            ent.1 += d;
        }
    }
    let mut grams: Vec<(Vec<u32>, u64, u64)> = total
        .into_iter()
        .map(|(k, (c, d))| (unpack(k, bits), c, d))
        .collect();
    if let Some(m) = max_features {
        if m < grams.len() {
            grams.sort_unstable_by(|a, b| {
                b.1.cmp(&a.1)
                    .then(a.0.len().cmp(&b.0.len()))
                    .then(a.0.cmp(&b.0))
            });
            grams.truncate(m);
        }
    }
    grams.sort_unstable_by(|a, b| a.0.len().cmp(&b.0.len()).then(a.0.cmp(&b.0)));
    let mut v = NgramVocab {
        offsets: vec![0],
        codes: Vec::new(),
        df: Vec::with_capacity(grams.len()),
    };
    for (g, _, d) in grams {
        v.codes.extend_from_slice(&g);
        v.offsets.push(v.codes.len());
        v.df.push(d);
    }
    Ok(v)
}

/// Directly-follows vocabulary over a small alphabet: dense per-chunk count tables instead of
/// hashing (same result as the general path).
fn pair_fit(
    log: &EventLog,
    map: &[u32],
    n_ref: usize,
    max_features: Option<usize>,
    chunks: &[(usize, usize)],
    ctl: &Control,
) -> TmResult<NgramVocab> {
    let cells = n_ref * n_ref;
    let parts: Vec<TmResult<(Vec<u64>, Vec<u64>)>> = chunks
        .par_iter()
        .map(|&(s, e)| {
            ctl.check()?;
            let mut cnt = vec![0u64; cells];
            let mut df = vec![0u64; cells];
            let mut last = vec![u32::MAX; cells];
            for c in s..e {
                for w in log.trace(c).windows(2) {
                    let (x, y) = (map[w[0] as usize], map[w[1] as usize]);
                    if x != UNSEEN && y != UNSEEN {
                        let j = x as usize * n_ref + y as usize;
                        cnt[j] += 1;
                        if last[j] != c as u32 {
                            last[j] = c as u32;
                            df[j] += 1;
                        }
                    }
                }
            }
            ctl.advance((e - s) as u64);
            Ok((cnt, df))
        })
        .collect();
    let mut cnt = vec![0u64; cells];
    let mut df = vec![0u64; cells];
    for p in parts {
        let (c, d) = p?;
        cnt.iter_mut().zip(c).for_each(|(a, b)| *a += b);
        df.iter_mut().zip(d).for_each(|(a, b)| *a += b);
    }
    let mut keep: Vec<usize> = (0..cells).filter(|&j| cnt[j] > 0).collect();
    if let Some(m) = max_features {
        if m < keep.len() {
            keep.sort_by(|&a, &b| cnt[b].cmp(&cnt[a]).then(a.cmp(&b)));
            keep.truncate(m);
            keep.sort_unstable();
        }
    }
    let mut v = NgramVocab {
        offsets: vec![0],
        codes: Vec::with_capacity(2 * keep.len()),
        df: Vec::with_capacity(keep.len()),
    };
    for j in keep {
        v.codes.push((j / n_ref) as u32);
        v.codes.push((j % n_ref) as u32);
        v.offsets.push(v.codes.len());
        v.df.push(df[j]);
    }
    Ok(v)
}

/// The vocabulary of all single activities `0..n_ref` (the activity profile), with their
/// document frequencies in `log`.
pub fn activity_vocab(log: &EventLog, map: &[u32], n_ref: usize) -> TmResult<NgramVocab> {
    check_map(log, map, n_ref)?;
    let df = (0..log.n_cases())
        .into_par_iter()
        .fold(
            || (vec![0u64; n_ref], vec![u32::MAX; n_ref]),
            |(mut df, mut last), c| {
                for &a in log.trace(c) {
                    let r = map[a as usize];
                    if r != UNSEEN && last[r as usize] != c as u32 {
                        last[r as usize] = c as u32;
                        df[r as usize] += 1;
                    }
                }
                (df, last)
            },
        )
        .map(|(df, _)| df)
        .reduce(
            || vec![0u64; n_ref],
            |mut a, b| {
                for (x, y) in a.iter_mut().zip(b) {
                    *x += y;
                }
                a
            },
        );
    Ok(NgramVocab {
        offsets: (0..=n_ref).collect(),
        codes: (0..n_ref as u32).collect(),
        df,
    })
}

/// Smoothed inverse document frequencies `ln((1 + n) / (1 + df)) + 1` for `n` documents.
pub fn idf(df: &[u64], n: usize) -> Vec<f64> {
    df.iter()
        .map(|&d| ((1.0 + n as f64) / (1.0 + d as f64)).ln() + 1.0)
        .collect()
}

/// Apply a vocabulary to `log`: one sparse row per case. Returns the matrix and the number of
/// events whose activity the vocabulary does not know (they are skipped).
pub fn ngram_transform(
    log: &EventLog,
    map: &[u32],
    n_ref: usize,
    vocab: &NgramVocab,
    opts: &NgramOptions,
    ctl: &Control,
) -> TmResult<(Csr, u64)> {
    check_map(log, map, n_ref)?;
    if let Some(w) = &opts.idf {
        if w.len() != vocab.len() {
            return Err(TmError::param(
                "idf",
                format!(
                    "{} idf weights given for a vocabulary of {}",
                    w.len(),
                    vocab.len()
                ),
            ));
        }
    }
    let (n_min, n_max) = (0..vocab.len()).fold((usize::MAX, 0), |(lo, hi), j| {
        let l = vocab.gram(j).len();
        (lo.min(l), hi.max(l))
    });
    let n = log.n_cases();
    ctl.set_total(n as u64);
    let unseen: u64 = {
        let flags: Vec<bool> = map.iter().map(|&c| c == UNSEEN).collect();
        if flags.iter().any(|&f| f) {
            log.activities()
                .par_iter()
                .with_min_len(1 << 16)
                .filter(|&&a| flags[a as usize])
                .count() as u64
        } else {
            0
        }
    };
    if vocab.is_empty() {
        let csr = Csr {
            n_rows: n,
            n_cols: 0,
            indptr: vec![0; n + 1],
            indices: Vec::new(),
            data: Vec::new(),
        };
        return Ok((csr, unseen));
    }
    // Column lookup: a direct table for unigrams over all activities, else a hash map.
    let unigram_direct = n_max == 1 && vocab.len() == n_ref;
    let bits = check_n(n_min, n_max, n_ref)?;
    let lookup: FxMap<u64, u32> = if unigram_direct {
        FxMap::default()
    } else {
        (0..vocab.len())
            .map(|j| (pack(vocab.gram(j), bits), j as u32))
            .collect()
    };
    // For pairs over a small alphabet, a dense table beats hashing.
    let pair_table: Option<Vec<u32>> = if n_min == 2 && n_max == 2 && n_ref <= 2048 {
        let mut t = vec![u32::MAX; n_ref * n_ref];
        for j in 0..vocab.len() {
            let g = vocab.gram(j);
            t[g[0] as usize * n_ref + g[1] as usize] = j as u32;
        }
        Some(t)
    } else {
        None
    };
    let chunks: Vec<(usize, usize)> = (0..n)
        .step_by(CHUNK)
        .map(|s| (s, (s + CHUNK).min(n)))
        .collect();
    let blocks: Vec<TmResult<(Vec<u32>, Vec<i32>, Vec<f64>)>> = chunks
        .par_iter()
        .map(|&(s, e)| {
            ctl.check()?;
            let mut lens = Vec::with_capacity(e - s);
            let mut idx: Vec<i32> = Vec::new();
            let mut val: Vec<f64> = Vec::new();
            let mut cols: Vec<u32> = Vec::new();
            for c in s..e {
                cols.clear();
                let tr = log.trace(c);
                if unigram_direct {
                    cols.extend(tr.iter().map(|&a| map[a as usize]).filter(|&r| r != UNSEEN));
                } else if let Some(t) = &pair_table {
                    for w in tr.windows(2) {
                        let (x, y) = (map[w[0] as usize], map[w[1] as usize]);
                        if x != UNSEEN && y != UNSEEN {
                            let j = t[x as usize * n_ref + y as usize];
                            if j != u32::MAX {
                                cols.push(j);
                            }
                        }
                    }
                } else {
                    for_each_gram(tr, map, n_min, n_max, bits, |k| {
                        if let Some(&j) = lookup.get(&k) {
                            cols.push(j);
                        }
                    });
                }
                cols.sort_unstable();
                let start = idx.len();
                let mut i = 0;
                while i < cols.len() {
                    let mut j = i + 1;
                    while j < cols.len() && cols[j] == cols[i] {
                        j += 1;
                    }
                    let col = cols[i] as usize;
                    let mut v = if opts.binary { 1.0 } else { (j - i) as f64 };
                    if let Some(w) = &opts.idf {
                        v *= w[col];
                    }
                    idx.push(col as i32);
                    val.push(v);
                    i = j;
                }
                let row = &mut val[start..];
                let norm = match opts.norm {
                    Norm::None => 0.0,
                    Norm::L1 => row.iter().map(|v| v.abs()).sum(),
                    Norm::L2 => row.iter().map(|v| v * v).sum::<f64>().sqrt(),
                };
                if norm > 0.0 {
                    row.iter_mut().for_each(|v| *v /= norm);
                }
                lens.push((idx.len() - start) as u32);
            }
            ctl.advance((e - s) as u64);
            Ok((lens, idx, val))
        })
        .collect();
    let blocks = blocks.into_iter().collect::<TmResult<Vec<_>>>()?;
    Ok((Csr::from_blocks(blocks, vocab.len()), unseen))
}

/// Number of fixed columns of [`performance_profile`] before the per-activity ones.
pub const PERFORMANCE_FIXED: usize = 4;

/// The performance profile: a dense row-major `n_cases x (4 + n_ref)` matrix in seconds.
///
/// Columns: case duration (last minus first timestamp), number of events, mean and max waiting
/// time (the gaps between consecutive events of the case; 0 for a one-event case), then for
/// each fitted activity the time spent on it, defined as the sum of the gaps that end at its
/// events (the time from the previous event of the case until this one completed). Events of
/// unseen activities still count in duration, length and waits; their time is dropped from the
/// per-activity columns and their number returned.
pub fn performance_profile(
    log: &EventLog,
    map: &[u32],
    n_ref: usize,
    ctl: &Control,
) -> TmResult<(Vec<f64>, u64)> {
    check_map(log, map, n_ref)?;
    let n = log.n_cases();
    let width = PERFORMANCE_FIXED + n_ref;
    ctl.set_total(n as u64);
    let mut out = vec![0.0; n * width];
    let unseen: u64 = out
        .par_chunks_mut(width * CHUNK)
        .enumerate()
        .map(|(ci, block)| -> TmResult<u64> {
            ctl.check()?;
            let mut unseen = 0u64;
            for (r, row) in block.chunks_mut(width).enumerate() {
                let c = ci * CHUNK + r;
                let tr = log.trace(c);
                let tt = log.trace_times(c);
                let len = tr.len();
                row[0] = (tt[len - 1] - tt[0]) as f64 * 1e-9;
                row[1] = len as f64;
                let mut max_gap = 0i64;
                for i in 0..len {
                    let r_code = map[tr[i] as usize];
                    if r_code == UNSEEN {
                        unseen += 1;
                    }
                    if i > 0 {
                        let gap = tt[i] - tt[i - 1];
                        max_gap = max_gap.max(gap);
                        if r_code != UNSEEN {
                            row[PERFORMANCE_FIXED + r_code as usize] += gap as f64 * 1e-9;
                        }
                    }
                }
                row[2] = if len > 1 {
                    row[0] / (len - 1) as f64
                } else {
                    0.0
                };
                row[3] = max_gap as f64 * 1e-9;
            }
            ctl.advance((block.len() / width.max(1)) as u64);
            Ok(unseen)
        })
        .collect::<TmResult<Vec<u64>>>()?
        .into_iter()
        .sum();
    Ok((out, unseen))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::log::tests::log_from;

    #[test]
    fn hstack_puts_columns_side_by_side_across_chunks() {
        // Two random sparse parts over more rows than one chunk, stacked, equal the dense
        // matrices placed side by side (the second one weighted).
        let n = CHUNK * 2 + 17;
        let make = |seed: usize, cols: usize| {
            let mut dense = vec![0.0; n * cols];
            for (i, v) in dense.iter_mut().enumerate() {
                if (i * 2_654_435_761 + seed) % 7 == 0 {
                    *v = (i % 13) as f64 + 1.0;
                }
            }
            let (mut indptr, mut indices, mut data) = (vec![0i64], Vec::new(), Vec::new());
            for r in 0..n {
                for c in 0..cols {
                    let v = dense[r * cols + c];
                    if v != 0.0 {
                        indices.push(c as i32);
                        data.push(v);
                    }
                }
                indptr.push(indices.len() as i64);
            }
            (dense, indptr, indices, data)
        };
        let (da, pa, ia, xa) = make(1, 5);
        let (db, pb, ib, xb) = make(3, 3);
        fn view<'a>(p: &'a [i64], i: &'a [i32], x: &'a [f64], c: usize) -> CsrView<'a> {
            CsrView {
                indptr: p,
                indices: i,
                data: x,
                n_cols: c,
            }
        }
        let parts = [view(&pa, &ia, &xa, 5), view(&pb, &ib, &xb, 3)];
        let out = hstack(&parts, &[1.0, 2.0], n).unwrap();
        assert_eq!(out.n_cols, 8);
        let got = out.to_dense();
        for r in 0..n {
            for c in 0..5 {
                assert_eq!(got[r * 8 + c], da[r * 5 + c]);
            }
            for c in 0..3 {
                assert_eq!(got[r * 8 + 5 + c], 2.0 * db[r * 3 + c]);
            }
        }
        // A part with the wrong number of rows or a column out of range is refused.
        let short = [view(&pa[..n], &ia, &xa, 5)];
        assert!(hstack(&short, &[1.0], n).is_err());
        let narrow = [view(&pa, &ia, &xa, 4)];
        let e = hstack(&narrow, &[1.0], n).unwrap_err().to_string();
        assert!(e.contains("column index 4 outside 0..4"), "{e}");
    }

    fn toy() -> EventLog {
        // Toy log T of the reference notes (abcdf, acbdf, xyzz).
        log_from(&[
            ("1", "a", 0),
            ("1", "b", 1),
            ("1", "c", 2),
            ("1", "d", 3),
            ("1", "f", 4),
            ("2", "a", 0),
            ("2", "c", 1),
            ("2", "b", 2),
            ("2", "d", 3),
            ("2", "f", 4),
            ("3", "x", 0),
            ("3", "y", 5),
            ("3", "z", 6),
            ("3", "z", 10),
        ])
    }

    fn ident(log: &EventLog) -> Vec<u32> {
        (0..log.activity_names().len() as u32).collect()
    }

    #[test]
    fn activity_counts_per_case() {
        let log = toy();
        let map = ident(&log);
        let na = map.len();
        let v = activity_vocab(&log, &map, na).unwrap();
        let (x, u) = ngram_transform(
            &log,
            &map,
            na,
            &v,
            &NgramOptions::default(),
            &Control::new(),
        )
        .unwrap();
        assert_eq!(u, 0);
        let d = x.to_dense();
        // abcdf: a, b, c, d, f once each (reference notes, toy log T)
        assert_eq!(&d[..na], &[1., 1., 1., 1., 1., 0., 0., 0.]);
        // xyzz: z twice
        assert_eq!(&d[2 * na..], &[0., 0., 0., 0., 0., 1., 1., 2.]);
        assert_eq!(v.df, vec![2, 2, 2, 2, 2, 1, 1, 1]);
    }

    #[test]
    fn transitions_and_ngrams() {
        let log = toy();
        let map = ident(&log);
        let na = map.len();
        let v = ngram_fit(&log, &map, na, 2, 2, None, &Control::new()).unwrap();
        // ab bc cd df ac cb bd xy yz zz -> 10 distinct pairs
        assert_eq!(v.len(), 10);
        let (x, _) = ngram_transform(
            &log,
            &map,
            na,
            &v,
            &NgramOptions::default(),
            &Control::new(),
        )
        .unwrap();
        assert_eq!(x.indptr, vec![0, 4, 8, 11]);
        let v3 = ngram_fit(&log, &map, na, 1, 3, Some(5), &Control::new()).unwrap();
        assert_eq!(v3.len(), 5);
        // the most frequent: a, b, c, d, f (2 each) beat z (2) on length tie -> order by codes
        assert!((0..5).all(|j| v3.gram(j).len() == 1));
        assert!(ngram_fit(&log, &map, na, 3, 2, None, &Control::new()).is_err());
        assert!(ngram_fit(&log, &map, na, 1, 40, None, &Control::new()).is_err());
    }

    #[test]
    fn unseen_activities_are_counted_and_skipped() {
        let log = toy();
        // Pretend only a, b, c are known (codes 0..3); d, f, x, y, z unseen.
        let mut map = vec![UNSEEN; log.activity_names().len()];
        for (i, m) in map.iter_mut().enumerate().take(3) {
            *m = i as u32;
        }
        let v = ngram_fit(&log, &map, 3, 2, 2, None, &Control::new()).unwrap();
        let (x, u) =
            ngram_transform(&log, &map, 3, &v, &NgramOptions::default(), &Control::new()).unwrap();
        assert_eq!(u, 8);
        assert_eq!(x.n_rows, 3);
        assert_eq!(x.indptr[3], 4); // ab bc | ac cb
    }

    #[test]
    fn tfidf_and_norms() {
        let log = toy();
        let map = ident(&log);
        let na = map.len();
        let v = activity_vocab(&log, &map, na).unwrap();
        let opts = NgramOptions {
            binary: false,
            idf: Some(idf(&v.df, 3)),
            norm: Norm::L2,
        };
        let (x, _) = ngram_transform(&log, &map, na, &v, &opts, &Control::new()).unwrap();
        for r in 0..3 {
            let s: f64 = x.data[x.indptr[r] as usize..x.indptr[r + 1] as usize]
                .iter()
                .map(|v| v * v)
                .sum();
            approx::assert_abs_diff_eq!(s, 1.0, epsilon = 1e-12);
        }
        assert!(Norm::parse("l3").is_err());
    }

    #[test]
    fn performance_columns() {
        let log = toy();
        let map = ident(&log);
        let na = map.len();
        let (p, u) = performance_profile(&log, &map, na, &Control::new()).unwrap();
        assert_eq!(u, 0);
        let w = PERFORMANCE_FIXED + na;
        let r = &p[2 * w..3 * w];
        approx::assert_abs_diff_eq!(r[0], 10e-9);
        assert_eq!(r[1], 4.0);
        approx::assert_abs_diff_eq!(r[3], 5e-9);
        // time on z: gaps 1 and 4 ns
        approx::assert_abs_diff_eq!(r[PERFORMANCE_FIXED + 7], 5e-9);
    }
}
