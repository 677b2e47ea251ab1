//! Dictionary encoding of raw columns: text (Arrow-style UTF-8 buffers) and integers.
//!
//! Codes are assigned in order of first appearance, so that the case order of a log built from a
//! frame follows the frame. Work is split into chunks encoded in parallel, whose dictionaries are
//! merged in chunk order (keeping first-appearance order) before the codes are remapped.

use std::hash::Hash;

use rayon::prelude::*;

use crate::error::{TmError, TmResult};

pub use crate::hash::{FxHasher, FxMap};

const NULL: u32 = u32::MAX;

fn encode_chunks<K, F>(n: usize, key: F) -> (Vec<u32>, Vec<K>)
where
    K: Hash + Eq + Copy + Send + Sync,
    F: Fn(usize) -> Option<K> + Sync,
{
    let chunk = n
        .div_ceil(rayon::current_num_threads().max(1) * 2)
        .max(1 << 16);
    let parts: Vec<(Vec<u32>, Vec<K>)> = (0..n.div_ceil(chunk))
        .into_par_iter()
        .map(|p| {
            let (s, e) = (p * chunk, ((p + 1) * chunk).min(n));
            let mut map: FxMap<K, u32> = FxMap::default();
            let mut uniq = Vec::new();
            let codes = (s..e)
                .map(|i| match key(i) {
                    None => NULL,
                    Some(k) => *map.entry(k).or_insert_with(|| {
                        uniq.push(k);
                        (uniq.len() - 1) as u32
                    }),
                })
                .collect();
            (codes, uniq)
        })
        .collect();
    // Merge the chunk dictionaries in chunk order.
    let mut global: FxMap<K, u32> = FxMap::default();
    let mut uniq: Vec<K> = Vec::new();
    let remaps: Vec<Vec<u32>> = parts
        .iter()
        .map(|(_, u)| {
            u.iter()
                .map(|&k| {
                    *global.entry(k).or_insert_with(|| {
                        uniq.push(k);
                        (uniq.len() - 1) as u32
                    })
                })
                .collect()
        })
        .collect();
    let codes: Vec<u32> = parts
        .into_par_iter()
        .zip(remaps.into_par_iter())
        .flat_map_iter(|((c, _), m)| {
            c.into_iter()
                .map(move |x| if x == NULL { NULL } else { m[x as usize] })
        })
        .collect();
    (codes, uniq)
}

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
