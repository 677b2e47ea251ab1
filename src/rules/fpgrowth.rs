//! FP-Growth (Han, Pei & Yin 2000, "Mining frequent patterns without candidate generation",
//! SIGMOD, 1–12).
//!
//! The method in four steps:
//!
//! 1. Count the items; keep the frequent ones and rank them by descending count (ties by item
//!    code), so that frequent items sit near the root and paths share prefixes.
//! 2. Insert each transaction, reduced to its frequent items in rank order, as a path of a
//!    prefix tree (the *FP-tree*); every node counts the transactions whose path runs through
//!    it. Here the tree is built without any per-node child map: the paths are sorted
//!    lexicographically, so each path shares with the previous one exactly its longest common
//!    prefix, and new nodes are appended to flat arrays (`item`, `parent`, `count`, all `u32`
//!    indices or `u64` counts). A *header* lists the nodes of each item.
//! 3. For each item `i`, its *conditional pattern base* is the set of root paths above the nodes
//!    of `i`, each weighted by the node count. `prefix ∪ {i}` is frequent with count
//!    `Σ count(node)`; the items frequent in the pattern base form a *conditional FP-tree*
//!    that is mined recursively with prefix `prefix ∪ {i}`.
//! 4. A tree that is a single path yields every combination of its nodes at once (the count of
//!    a combination is that of its deepest node).
//!
//! The conditional trees of different top-level items are independent, so they are mined in
//! parallel (one rayon task per frequent item). At the first level the conditional pattern
//! base of an item is read straight from the rank-ordered transactions (the part before the
//! item in each transaction holding it, found through an index of item positions): this is
//! the same multiset of paths the global FP-tree would give, but it streams through memory
//! instead of chasing parent pointers through a tree that sparse data hardly compresses.
//! From the second level on, conditional FP-trees are built and mined as above.
//!
//! Example 6.5 of Han, Kamber & Pei (the conditional pattern base of I5 is {I2,I1:1},
//! {I2,I1,I3:1}, giving {I2,I5}:2, {I1,I5}:2 and {I2,I1,I5}:2) is reproduced in the tests.

use super::itemsets::{frequent_items, run_tasks, ItemsetParams, Itemsets, Sink};
use super::transactions::Transactions;
use crate::control::Control;
use crate::error::{TmError, TmResult};

const ROOT: u32 = 0;

/// An FP-tree over item ranks `0..n_ranks`, flat arrays, node 0 the root.
struct FpTree {
    item: Vec<u32>,
    parent: Vec<u32>,
    count: Vec<u64>,
    head_off: Vec<usize>,
    head: Vec<u32>,
}

impl FpTree {
    /// Build from weighted paths (each sorted by rank ascending). `paths` is CSR.
    fn build(off: &[usize], items: &[u32], w: &[u64], n_ranks: usize) -> TmResult<FpTree> {
        let n_paths = w.len();
        let path = |k: usize| &items[off[k]..off[k + 1]];
        let order: Vec<u32> = if n_ranks < 0xFFFF {
            // Sort by a key packing the first four ranks (16 bits each, 0 = no item, so a
            // prefix sorts before its extensions), then finish ties by comparing the rest.
            let mut keyed: Vec<(u64, u32)> = (0..n_paths)
                .filter(|&k| off[k] < off[k + 1])
                .map(|k| {
                    let p = path(k);
                    let mut key = 0u64;
                    for j in 0..4 {
                        key = (key << 16) | p.get(j).map_or(0, |&r| u64::from(r) + 1);
                    }
                    (key, k as u32)
                })
                .collect();
            keyed.sort_unstable();
            let mut start = 0;
            while start < keyed.len() {
                let mut end = start + 1;
                while end < keyed.len() && keyed[end].0 == keyed[start].0 {
                    end += 1;
                }
                if end - start > 1 {
                    keyed[start..end].sort_unstable_by(|a, b| {
                        let (x, y) = (path(a.1 as usize), path(b.1 as usize));
                        x[x.len().min(4)..].cmp(&y[y.len().min(4)..])
                    });
                }
                start = end;
            }
            keyed.into_iter().map(|x| x.1).collect()
        } else {
            let mut o: Vec<u32> = (0..n_paths as u32)
                .filter(|&k| off[k as usize] < off[k as usize + 1])
                .collect();
            o.sort_unstable_by(|&a, &b| path(a as usize).cmp(path(b as usize)));
            o
        };
        let cap = items.len() + 1;
        let mut t = FpTree {
            item: Vec::with_capacity(cap),
            parent: Vec::with_capacity(cap),
            count: Vec::with_capacity(cap),
            head_off: Vec::new(),
            head: Vec::new(),
        };
        t.item.push(u32::MAX);
        t.parent.push(ROOT);
        t.count.push(0);
        let mut stack: Vec<u32> = Vec::new();
        let mut prev: &[u32] = &[];
        for &k in &order {
            let p = path(k as usize);
            let wk = w[k as usize];
            let lcp = p.iter().zip(prev).take_while(|(a, b)| a == b).count();
            stack.truncate(lcp);
            for &node in &stack {
                t.count[node as usize] += wk;
            }
            for (d, &it) in p.iter().enumerate().skip(lcp) {
                let id = u32::try_from(t.item.len()).map_err(|_| TmError::Limit {
                    message: "an FP-tree would exceed 4 294 967 295 nodes; raise min_support"
                        .into(),
                })?;
                t.item.push(it);
                t.parent.push(if d == 0 { ROOT } else { stack[d - 1] });
                t.count.push(wk);
                stack.push(id);
            }
            prev = p;
        }
        // Header: nodes grouped by item (counting sort).
        let mut head_off = vec![0usize; n_ranks + 1];
        for &it in &t.item[1..] {
            head_off[it as usize + 1] += 1;
        }
        for r in 0..n_ranks {
            head_off[r + 1] += head_off[r];
        }
        let mut fill = head_off.clone();
        let mut head = vec![0u32; t.item.len() - 1];
        for node in 1..t.item.len() {
            let it = t.item[node] as usize;
            head[fill[it]] = node as u32;
            fill[it] += 1;
        }
        t.head_off = head_off;
        t.head = head;
        Ok(t)
    }

    fn nodes_of(&self, r: usize) -> &[u32] {
        &self.head[self.head_off[r]..self.head_off[r + 1]]
    }

    /// Whether every node has at most one child (nodes were appended depth-first, so a chain
    /// is exactly `parent[k] == k - 1`).
    fn is_single_path(&self) -> bool {
        (1..self.item.len()).all(|k| self.parent[k] as usize == k - 1)
    }
}

/// Context of one mining task.
struct Ctx<'a> {
    min: u64,
    max_len: usize,
    code: &'a [u32],
}

/// Mine the tree with the given prefix (item codes). `Ok(false)`: stop quietly.
fn mine_tree(
    t: &FpTree,
    n_ranks: usize,
    prefix: &mut Vec<u32>,
    cx: &Ctx<'_>,
    sink: &mut Sink<'_>,
) -> TmResult<bool> {
    if t.item.len() <= 1 {
        return Ok(true);
    }
    if t.is_single_path() {
        return emit_path(t, prefix, cx, sink);
    }
    for r in (0..n_ranks).rev() {
        if !mine_item(t, r, prefix, cx, sink)? {
            return Ok(false);
        }
    }
    Ok(true)
}

/// Emit `prefix ∪ {r}` and mine its conditional tree.
fn mine_item(
    t: &FpTree,
    r: usize,
    prefix: &mut Vec<u32>,
    cx: &Ctx<'_>,
    sink: &mut Sink<'_>,
) -> TmResult<bool> {
    let nodes = t.nodes_of(r);
    let support: u64 = nodes.iter().map(|&n| t.count[n as usize]).sum();
    if support < cx.min {
        return Ok(true);
    }
    prefix.push(cx.code[r]);
    let go = sink.emit(prefix, support)?;
    if !go {
        prefix.pop();
        return Ok(false);
    }
    if prefix.len() < cx.max_len && r > 0 {
        // Conditional pattern base in one walk: the paths above the nodes of r, weighted by
        // node counts, with the item counts of the base.
        let mut local = vec![0u64; r];
        let mut off = Vec::with_capacity(nodes.len() + 1);
        off.push(0usize);
        let mut items: Vec<u32> = Vec::new();
        let mut w = Vec::with_capacity(nodes.len());
        for &n in nodes {
            let c = t.count[n as usize];
            let start = items.len();
            let mut a = t.parent[n as usize];
            while a != ROOT {
                let it = t.item[a as usize];
                local[it as usize] += c;
                items.push(it);
                a = t.parent[a as usize];
            }
            items[start..].reverse();
            off.push(items.len());
            w.push(c);
        }
        if !mine_base(r, &off, &mut items, &w, &local, prefix, cx, sink)? {
            prefix.pop();
            return Ok(false);
        }
    }
    prefix.pop();
    Ok(true)
}

/// Mine the conditional pattern base of `prefix` (which ends with the item of rank `r`):
/// paths in rank order (CSR `off`/`items`, weights `w`) and the item counts `local` of the
/// base. `items` is compacted in place.
#[allow(clippy::too_many_arguments)]
fn mine_base(
    r: usize,
    off: &[usize],
    items: &mut Vec<u32>,
    w: &[u64],
    local: &[u64],
    prefix: &mut Vec<u32>,
    cx: &Ctx<'_>,
    sink: &mut Sink<'_>,
) -> TmResult<bool> {
    let mut frequent = (0..r).filter(|&x| local[x] >= cx.min);
    match (frequent.next(), frequent.next()) {
        (None, _) => Ok(true),
        (Some(x), None) => {
            // A single frequent item: its conditional tree would be one node.
            prefix.push(cx.code[x]);
            let go = sink.emit(prefix, local[x])?;
            prefix.pop();
            Ok(go)
        }
        _ => {
            // Keep the frequent items of each path (compacted in place; wpos <= j, so no
            // unread item is overwritten).
            let mut wpos = 0usize;
            let mut new_off = Vec::with_capacity(off.len());
            new_off.push(0usize);
            for k in 0..w.len() {
                for j in off[k]..off[k + 1] {
                    let it = items[j];
                    if local[it as usize] >= cx.min {
                        items[wpos] = it;
                        wpos += 1;
                    }
                }
                new_off.push(wpos);
            }
            items.truncate(wpos);
            let cond = FpTree::build(&new_off, items, w, r)?;
            mine_tree(&cond, r, prefix, cx, sink)
        }
    }
}

/// A single-path tree: every non-empty combination of its nodes (up to `max_len` in total).
fn emit_path(
    t: &FpTree,
    prefix: &mut Vec<u32>,
    cx: &Ctx<'_>,
    sink: &mut Sink<'_>,
) -> TmResult<bool> {
    // Chain nodes 1..len; counts are non-increasing with depth.
    let chain: Vec<usize> = (1..t.item.len())
        .filter(|&k| t.count[k] >= cx.min)
        .collect();
    let room = cx.max_len.saturating_sub(prefix.len());
    // Depth-first over combinations, deepest chosen node last; count = count of that node.
    fn rec(
        t: &FpTree,
        chain: &[usize],
        start: usize,
        room: usize,
        prefix: &mut Vec<u32>,
        cx: &Ctx<'_>,
        sink: &mut Sink<'_>,
    ) -> TmResult<bool> {
        if room == 0 {
            return Ok(true);
        }
        for k in start..chain.len() {
            let node = chain[k];
            prefix.push(cx.code[t.item[node] as usize]);
            let go = sink.emit(prefix, t.count[node])?
                && rec(t, chain, k + 1, room - 1, prefix, cx, sink)?;
            prefix.pop();
            if !go {
                return Ok(false);
            }
        }
        Ok(true)
    }
    rec(t, &chain, 0, room, prefix, cx, sink)
}

/// Frequent itemsets by FP-Growth (not yet in canonical order).
pub(crate) fn mine(
    t: &Transactions,
    p: &ItemsetParams,
    min: u64,
    ctl: &Control,
) -> TmResult<Itemsets> {
    let (_counts, freq, rank) = frequent_items(t, min, false);
    let n_ranks = freq.len();
    // Transactions as rank paths.
    let mut off = Vec::with_capacity(t.len() + 1);
    off.push(0usize);
    let mut items = Vec::with_capacity(t.items().len());
    for k in 0..t.len() {
        let s = items.len();
        items.extend(
            t.get(k)
                .iter()
                .map(|&i| rank[i as usize])
                .filter(|&r| r != u32::MAX),
        );
        items[s..].sort_unstable();
        off.push(items.len());
    }
    ctl.check()?;
    // First level: the conditional pattern base of item r is the part before r of every
    // transaction holding r. Reading it from the rank-ordered transactions (through an index
    // of where each item occurs) streams through memory, where walking a global FP-tree
    // would chase parent pointers through a tree that sparse data hardly compresses.
    let mut occ_off = vec![0usize; n_ranks + 1];
    for &x in &items {
        occ_off[x as usize + 1] += 1;
    }
    for k in 0..n_ranks {
        occ_off[k + 1] += occ_off[k];
    }
    let mut fill = occ_off.clone();
    let mut occ = vec![(0usize, 0usize); items.len()];
    for k in 0..t.len() {
        for (j, &x) in items[off[k]..off[k + 1]].iter().enumerate() {
            let x = x as usize;
            occ[fill[x]] = (off[k], off[k] + j);
            fill[x] += 1;
        }
    }
    drop(fill);
    let cx = Ctx {
        min,
        max_len: p.max_len.unwrap_or(usize::MAX),
        code: &freq,
    };
    // One task per frequent item; the rarest items have the smallest bases.
    run_tasks(n_ranks, p, min, t.len(), ctl, |k, sink| {
        let r = n_ranks - 1 - k;
        let here = &occ[occ_off[r]..occ_off[r + 1]];
        let mut prefix = vec![freq[r]];
        if !sink.emit(&prefix, here.len() as u64)? {
            return Ok(false);
        }
        if cx.max_len < 2 || r == 0 {
            return Ok(true);
        }
        let mut local = vec![0u64; r];
        let mut boff = Vec::with_capacity(here.len() + 1);
        boff.push(0usize);
        let mut bitems = Vec::new();
        // One scattered read per occurrence (the copy); the counting pass is sequential.
        for &(s, e) in here {
            bitems.extend_from_slice(&items[s..e]);
            boff.push(bitems.len());
        }
        for &x in &bitems {
            local[x as usize] += 1;
        }
        let w = vec![1u64; here.len()];
        mine_base(r, &boff, &mut bitems, &w, &local, &mut prefix, &cx, sink)
    })
}

#[cfg(test)]
mod tests {
    use super::super::itemsets::tests::{as_pairs, brute, hkp, random_db};
    use super::super::itemsets::{canonical, frequent_itemsets, Algorithm};
    use super::super::transactions::MinSupport;
    use super::*;

    #[test]
    fn tree_shares_prefixes() {
        // Han, Pei & Yin 2000, Table 1 / Fig. 1: the FP-tree of the five transactions at ξ = 3
        // (transactions from memory) has 10 nodes besides the root... we check node totals.
        let t =
            Transactions::from_lists(&[vec![0, 1, 2], vec![0, 1], vec![0, 2], vec![3]], 4).unwrap();
        let off = [0usize, 3, 5, 7, 8];
        let items = [0u32, 1, 2, 0, 1, 0, 2, 3];
        let tree = FpTree::build(&off, &items, &[1, 1, 1, 1], 4).unwrap();
        // root, 0, 0-1, 0-1-2, 0-2, 3
        assert_eq!(tree.item.len(), 6);
        assert_eq!(tree.count[1], 3);
        assert!(!tree.is_single_path());
        assert_eq!(t.len(), 4);
    }

    #[test]
    fn hkp_conditional_base_of_i5() {
        // Han, Kamber & Pei Example 6.5: itemsets ending in I5 (code 4).
        let t = hkp();
        let p = ItemsetParams::new(MinSupport::Count(2));
        let r = canonical(mine(&t, &p, 2, &Control::new()).unwrap());
        let with5: Vec<_> = as_pairs(&r)
            .into_iter()
            .filter(|x| x.0.contains(&4))
            .collect();
        assert_eq!(
            with5,
            vec![
                (vec![4], 2),
                (vec![0, 4], 2),
                (vec![1, 4], 2),
                (vec![0, 1, 4], 2)
            ]
        );
    }

    #[test]
    fn single_path_and_thread_independence() {
        let t =
            Transactions::from_lists(&[vec![0, 1, 2, 3], vec![0, 1, 2], vec![0, 1]], 4).unwrap();
        let mut p = ItemsetParams::new(MinSupport::Count(1));
        p.algorithm = Algorithm::FpGrowth;
        let r = frequent_itemsets(&t, &p, &Control::new()).unwrap();
        assert_eq!(as_pairs(&r), brute(&t, 1));
        let t = random_db(9, 300, 10);
        let a = frequent_itemsets(&t, &p, &Control::new()).unwrap();
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(1)
            .build()
            .unwrap();
        let b = pool.install(|| frequent_itemsets(&t, &p, &Control::new()).unwrap());
        assert_eq!(a, b);
    }
}
