//! Dictionary encoding of raw columns: text (Arrow-style UTF-8 buffers) and integers.
//!
//! Codes are assigned in order of first appearance, so that the case order of a log built from a
//! frame follows the frame. Work is split into chunks encoded in parallel, whose dictionaries are
//! merged in chunk order (keeping first-appearance order) before the codes are remapped.

use std::hash::{BuildHasher, BuildHasherDefault, Hash};

use rayon::prelude::*;

use crate::error::{TmError, TmResult};

use super::views::group_by_key;
pub use crate::hash::{FxHasher, FxMap};

const NULL: u32 = u32::MAX;

fn encode_chunks<K, F>(n: usize, key: F) -> (Vec<u32>, Vec<K>)
where
    K: Hash + Eq + Copy + Send + Sync,
    F: Fn(usize) -> Option<K> + Sync,
{
    // Fast path: identify keys by a 63-bit hash (grouped by its top bits, so every partition's
    // map is small), then check every row against the first row of its key. A hash collision
    // between two different keys fails the check, and the exact path runs instead.
    const BITS: u32 = 8;
    let n_parts = 1usize << BITS;
    let build = BuildHasherDefault::<FxHasher>::default();
    let hr: Vec<(u64, u32)> = (0..n)
        .into_par_iter()
        .with_min_len(4096)
        .map(|i| (key(i).map_or(0, |k| build.hash_one(k) | 1), i as u32))
        .collect();
    let part: Vec<u32> = hr
        .par_iter()
        .map(|&(h, _)| {
            if h == 0 {
                n_parts as u32
            } else {
                (h >> (64 - BITS)) as u32
            }
        })
        .collect();
    let (off, grouped) = group_by_key(&part, &hr, n_parts + 1);
    drop(part);
    drop(hr);
    let local: Vec<(Vec<u32>, Vec<u32>)> = (0..n_parts)
        .into_par_iter()
        .map(|p| {
            let g = &grouped[off[p]..off[p + 1]];
            let mut map: FxMap<u64, u32> =
                FxMap::with_capacity_and_hasher(g.len() / 4, BuildHasherDefault::default());
            let mut first_rows: Vec<u32> = Vec::new();
            let codes = g
                .iter()
                .map(|&(h, r)| {
                    *map.entry(h).or_insert_with(|| {
                        first_rows.push(r);
                        (first_rows.len() - 1) as u32
                    })
                })
                .collect();
            (codes, first_rows)
        })
        .collect();
    let mut firsts: Vec<(u32, u32, u32)> = local
        .iter()
        .enumerate()
        .flat_map(|(p, (_, fr))| {
            fr.iter()
                .enumerate()
                .map(move |(j, &r)| (r, p as u32, j as u32))
        })
        .collect();
    firsts.par_sort_unstable();
    let mut remap: Vec<Vec<u32>> = local.iter().map(|(_, fr)| vec![0u32; fr.len()]).collect();
    let first_row: Vec<u32> = firsts.iter().map(|&(r, _, _)| r).collect();
    for (g, &(_, p, j)) in firsts.iter().enumerate() {
        remap[p as usize][j as usize] = g as u32;
    }
    let mut codes = vec![NULL; n];
    let out = SyncPtr(codes.as_mut_ptr());
    local
        .par_iter()
        .zip(remap.par_iter())
        .enumerate()
        .for_each(|(p, ((lc, _), m))| {
            let o = &out;
            for (&(_, r), &c) in grouped[off[p]..off[p + 1]].iter().zip(lc) {
                // SAFETY: every row belongs to exactly one partition, so the writes of
                // different partitions go to disjoint slots of `codes`, all `< n`.
                unsafe { *o.0.add(r as usize) = m[c as usize] };
            }
        });
    let consistent = codes
        .par_iter()
        .enumerate()
        .with_min_len(4096)
        .all(|(i, &c)| c == NULL || key(i) == key(first_row[c as usize] as usize));
    if !consistent {
        return encode_exact(n, &key);
    }
    let uniq = first_row
        .iter()
        .map(|&r| key(r as usize).unwrap_or_else(|| unreachable!()))
        .collect();
    (codes, uniq)
}

/// The exact path of [`encode_chunks`], used when two keys share a hash.
fn encode_exact<K, F>(n: usize, key: &F) -> (Vec<u32>, Vec<K>)
where
    K: Hash + Eq + Copy + Send + Sync,
    F: Fn(usize) -> Option<K> + Sync,
{
    // Hash-partitioned encoding: rows are grouped by the top bits of their key's hash, so each
    // partition holds a disjoint set of keys and gets a small, cache-resident map of its own;
    // partitions run in parallel and need no merge. Codes are then renumbered by the first row
    // of each key, which gives first-appearance order whatever the number of threads.
    const BITS: u32 = 8;
    let n_parts = 1usize << BITS;
    let build = BuildHasherDefault::<FxHasher>::default();
    let part: Vec<u32> = (0..n)
        .into_par_iter()
        .with_min_len(4096)
        .map(|i| match key(i) {
            None => n_parts as u32,
            Some(k) => (build.hash_one(k) >> (64 - BITS)) as u32,
        })
        .collect();
    let rows: Vec<u32> = (0..n as u32).collect();
    let (off, grouped) = group_by_key(&part, &rows, n_parts + 1);
    drop(part);
    // Per partition: local codes of its rows (in row order) and its keys with their first row.
    let local: Vec<(Vec<u32>, Vec<(u32, K)>)> = (0..n_parts)
        .into_par_iter()
        .map(|p| {
            let rs = &grouped[off[p]..off[p + 1]];
            let mut map: FxMap<K, u32> =
                FxMap::with_capacity_and_hasher(rs.len() / 4, BuildHasherDefault::default());
            let mut keys: Vec<(u32, K)> = Vec::new();
            let codes = rs
                .iter()
                .map(|&r| {
                    // Rows of this partition are never null.
                    let k = key(r as usize).unwrap_or_else(|| unreachable!());
                    *map.entry(k).or_insert_with(|| {
                        keys.push((r, k));
                        (keys.len() - 1) as u32
                    })
                })
                .collect();
            (codes, keys)
        })
        .collect();
    // Global numbering by first appearance.
    let mut firsts: Vec<(u32, u32, u32)> = local
        .iter()
        .enumerate()
        .flat_map(|(p, (_, ks))| {
            ks.iter()
                .enumerate()
                .map(move |(j, &(r, _))| (r, p as u32, j as u32))
        })
        .collect();
    firsts.par_sort_unstable();
    let mut remap: Vec<Vec<u32>> = local.iter().map(|(_, ks)| vec![0u32; ks.len()]).collect();
    let mut uniq: Vec<K> = Vec::with_capacity(firsts.len());
    for (g, &(_, p, j)) in firsts.iter().enumerate() {
        remap[p as usize][j as usize] = g as u32;
        uniq.push(local[p as usize].1[j as usize].1);
    }
    let mut codes = vec![NULL; n];
    let out = SyncPtr(codes.as_mut_ptr());
    local
        .par_iter()
        .zip(remap.par_iter())
        .enumerate()
        .for_each(|(p, ((lc, _), m))| {
            let o = &out;
            for (&r, &c) in grouped[off[p]..off[p + 1]].iter().zip(lc) {
                // SAFETY: every row belongs to exactly one partition, so the writes of
                // different partitions go to disjoint slots of `codes`, all `< n`.
                unsafe { *o.0.add(r as usize) = m[c as usize] };
            }
        });
    (codes, uniq)
}

struct SyncPtr(*mut u32);
// SAFETY: used only for the disjoint writes in `encode_chunks`.
unsafe impl Sync for SyncPtr {}
// SAFETY: as above.
unsafe impl Send for SyncPtr {}

/// Encode an Arrow-layout UTF-8 column (`offsets` has `n + 1` entries into `data`). Nulls (where
/// `valid` is false) get code `u32::MAX`. Returns codes and the distinct strings in order of
/// first appearance.
pub fn factorize_utf8(
    offsets: &[i64],
    data: &[u8],
    valid: Option<&[bool]>,
    column: &str,
) -> TmResult<(Vec<u32>, Vec<String>)> {
    let n = offsets.len().saturating_sub(1);
    if let Some(v) = valid {
        if v.len() != n {
            return Err(TmError::schema(
                column,
                None,
                "validity mask length differs from values",
            ));
        }
    }
    if offsets.windows(2).any(|w| w[1] < w[0])
        || offsets.last().is_some_and(|&e| e as usize > data.len())
        || offsets.first().is_some_and(|&s| s < 0)
    {
        return Err(TmError::schema(
            column,
            None,
            format!("column '{column}': malformed string buffers"),
        ));
    }
    let (codes, uniq) = encode_chunks(n, |i| {
        if valid.is_some_and(|v| !v[i]) {
            None
        } else {
            Some(&data[offsets[i] as usize..offsets[i + 1] as usize])
        }
    });
    let mut names = Vec::with_capacity(uniq.len());
    for u in uniq {
        match std::str::from_utf8(u) {
            Ok(s) => names.push(s.to_string()),
            Err(_) => {
                let row = (0..n)
                    .find(|&i| {
                        codes[i] != NULL && &data[offsets[i] as usize..offsets[i + 1] as usize] == u
                    })
                    .unwrap_or(0);
                return Err(TmError::schema(
                    column,
                    Some(row as u64),
                    format!("column '{column}', row {row}: the value is not valid UTF-8 text"),
                ));
            }
        }
    }
    Ok((codes, names))
}

/// Encode an integer column. Nulls (where `valid` is false) get code `u32::MAX`. Returns codes
/// and the distinct values in order of first appearance.
pub fn factorize_i64(values: &[i64], valid: Option<&[bool]>) -> (Vec<u32>, Vec<i64>) {
    encode_chunks(values.len(), |i| {
        if valid.is_some_and(|v| !v[i]) {
            None
        } else {
            Some(values[i])
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn utf8_first_appearance_and_nulls() {
        let data = b"xyyxzz";
        let offsets = [0i64, 1, 3, 4, 6, 6];
        let valid = [true, true, true, true, false];
        let (codes, names) = factorize_utf8(&offsets, data, Some(&valid), "c").unwrap();
        assert_eq!(names, vec!["x", "yy", "zz"]);
        assert_eq!(codes, vec![0, 1, 0, 2, NULL]);
        let bad = [0xffu8, 0xfe];
        let err = factorize_utf8(&[0, 2], &bad, None, "c").unwrap_err();
        assert!(matches!(err, TmError::Schema { row: Some(0), .. }));
    }

    #[test]
    fn fast_and_exact_paths_agree() {
        let v: Vec<i64> = (0..200_000).map(|i| (i * 7919 + i / 3) % 5003).collect();
        let key = |i: usize| if i % 97 == 0 { None } else { Some(v[i]) };
        assert_eq!(encode_chunks(v.len(), key), encode_exact(v.len(), &key));
    }

    #[test]
    fn i64_across_chunks_matches_sequential() {
        let v: Vec<i64> = (0..300_000).map(|i| (i * 7919) % 1000).collect();
        let (codes, uniq) = factorize_i64(&v, None);
        let mut seen = std::collections::HashMap::new();
        for (i, &x) in v.iter().enumerate() {
            let n = seen.len() as u32;
            let c = *seen.entry(x).or_insert(n);
            assert_eq!(codes[i], c);
            assert_eq!(uniq[c as usize], x);
        }
    }
}

#[cfg(test)]
mod speed {
    use super::*;

    /// `cargo test --release factorize_speed -- --ignored --nocapture`
    #[test]
    #[ignore]
    fn factorize_speed() {
        let n = 10_000_000usize;
        let mut data = Vec::new();
        let mut offsets = vec![0i64];
        for i in 0..n {
            data.extend_from_slice(format!("R{:07}", i % 1_000_000).as_bytes());
            offsets.push(data.len() as i64);
        }
        for _ in 0..2 {
            let t = std::time::Instant::now();
            let (codes, names) = factorize_utf8(&offsets, &data, None, "case").unwrap();
            println!(
                "{} rows, {} keys: {:?}",
                codes.len(),
                names.len(),
                t.elapsed()
            );
        }
    }
}
