//! The hash function used by tracemill's hash maps: FxHash (the multiply-rotate scheme of rustc
//! and Firefox). Fast for the short keys the kernels hash (integer codes, n-gram codes, short
//! byte strings); not resistant to adversarial keys, which is fine for one-shot local work on
//! a user's own data.

use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};

/// The FxHash hasher.
#[derive(Default, Clone, Copy)]
pub struct FxHasher {
    hash: u64,
}

const SEED: u64 = 0x51_7c_c1_b7_27_22_0a_95;

impl FxHasher {
    #[inline]
    fn add(&mut self, w: u64) {
        self.hash = (self.hash.rotate_left(5) ^ w).wrapping_mul(SEED);
    }
}

impl Hasher for FxHasher {
    #[inline]
    fn write(&mut self, bytes: &[u8]) {
        let mut chunks = bytes.chunks_exact(8);
        for c in &mut chunks {
            let mut b = [0u8; 8];
            b.copy_from_slice(c);
            self.add(u64::from_le_bytes(b));
        }
        let rest = chunks.remainder();
        if !rest.is_empty() {
            let mut b = [0u8; 8];
            b[..rest.len()].copy_from_slice(rest);
            self.add(u64::from_le_bytes(b) ^ (rest.len() as u64) << 56);
        }
    }
    #[inline]
    fn write_u32(&mut self, i: u32) {
        self.add(u64::from(i));
    }
    #[inline]
    fn write_u64(&mut self, i: u64) {
        self.add(i);
    }
    #[inline]
    fn write_usize(&mut self, i: usize) {
        self.add(i as u64);
    }
    #[inline]
    fn finish(&self) -> u64 {
        // The multiply only carries entropy upwards, so keys that differ in their last bytes
        // (e.g. "R0000001", "R0000002": the high byte of a little-endian word) would share
        // their low bits, which pick the bucket: mix the high bits down (MurmurHash3's fmix64
        // finaliser, Appleby 2011).
        let mut h = self.hash;
        h ^= h >> 33;
        h = h.wrapping_mul(0xff51_afd7_ed55_8ccd);
        h ^= h >> 33;
        h = h.wrapping_mul(0xc4ce_b9fe_1a85_ec53);
        h ^ (h >> 33)
    }
}

/// A hash map using [`FxHasher`].
pub type FxMap<K, V> = HashMap<K, V, BuildHasherDefault<FxHasher>>;

#[cfg(test)]
mod tests {
    use super::*;
    use std::hash::Hash;

    #[test]
    fn low_bits_vary_when_only_the_last_bytes_do() {
        // Case ids like R0000001..R0004096 differ only in the high bytes of their word; the
        // bucket index (low bits) must still spread them.
        let mut low = std::collections::HashSet::new();
        for i in 0..4096 {
            let key = format!("R{i:07}");
            let mut s = FxHasher::default();
            key.as_bytes().hash(&mut s);
            low.insert(s.finish() & 0xfff);
        }
        assert!(low.len() > 2000, "{} distinct low 12-bit values", low.len());
    }

    #[test]
    fn distinguishes_lengths_and_values() {
        let h = |x: &[u8]| {
            let mut s = FxHasher::default();
            x.hash(&mut s);
            s.finish()
        };
        assert_ne!(h(b"a"), h(b"a\0"));
        assert_ne!(h(b"ab"), h(b"ba"));
        let mut m: FxMap<u64, u32> = FxMap::default();
        m.insert(7, 1);
        assert_eq!(m.get(&7), Some(&1));
    }
}
