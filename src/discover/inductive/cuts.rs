//! Cut detection on the directly-follows graph of a (sub)log: exclusive choice, sequence,
//! parallel and loop cuts (Leemans, Fahland & van der Aalst 2013, Petri Nets, LNCS 7927), and
//! the infrequent-edge filter of the IMf variant (Leemans, Fahland & van der Aalst 2013, BPM
//! Workshops, LNBIP 171).
//!
//! Each detector returns a partition of the activities (local indices) or `None`:
//! * **exclusive choice**: the connected components of the graph seen as undirected;
//! * **sequence**: strongly connected components, merged while two are mutually unreachable,
//!   ordered by reachability; accepted only if every earlier part reaches every later part and
//!   no later part reaches back;
//! * **parallel**: the connected components of the graph that links two activities unless
//!   both `a>b` and `b>a` hold; components without a start or an end activity are merged into
//!   one that has both;
//! * **loop**: the body holds the start and end activities; the other components are redo
//!   parts if they are entered only from end activities (from all of them) and left only to
//!   start activities (to all of them); others join the body.

// Index loops over dense adjacency matrices read closer to the definitions.
#![allow(clippy::needless_range_loop)]

use super::SubLog;

/// The directly-follows graph of a sublog over its own activities.
#[derive(Debug, Clone)]
pub struct LocalDfg {
    /// Global activity codes, sorted; local index = position.
    pub acts: Vec<u32>,
    /// Dense counts `n x n`.
    pub edge: Vec<u64>,
    /// Start counts per local activity.
    pub start: Vec<u64>,
    /// End counts per local activity.
    pub end: Vec<u64>,
}

impl LocalDfg {
    /// Build from a sublog (empty traces contribute nothing).
    pub fn new(log: &SubLog, n_global: usize) -> LocalDfg {
        let mut local = vec![u32::MAX; n_global];
        let mut acts = Vec::new();
        for (t, _) in log {
            for &a in t {
                if local[a as usize] == u32::MAX {
                    local[a as usize] = 0;
                    acts.push(a);
                }
            }
        }
        acts.sort_unstable();
        for (i, &a) in acts.iter().enumerate() {
            local[a as usize] = i as u32;
        }
        let n = acts.len();
        let mut edge = vec![0u64; n * n];
        let mut start = vec![0u64; n];
        let mut end = vec![0u64; n];
        for (t, c) in log {
            if t.is_empty() {
                continue;
            }
            start[local[t[0] as usize] as usize] += c;
            end[local[t[t.len() - 1] as usize] as usize] += c;
            for w in t.windows(2) {
                edge[local[w[0] as usize] as usize * n + local[w[1] as usize] as usize] += c;
            }
        }
        LocalDfg {
            acts,
            edge,
            start,
            end,
        }
    }

    /// Number of activities.
    pub fn n(&self) -> usize {
        self.acts.len()
    }

    #[inline]
    fn e(&self, a: usize, b: usize) -> bool {
        self.edge[a * self.n() + b] > 0
    }

    /// IMf filter: keep `a -> b` only if its count reaches `f` times the strongest outgoing
    /// edge of `a`; keep start/end activities reaching `f` times the strongest start/end.
    pub fn filtered(&self, f: f64) -> LocalDfg {
        let n = self.n();
        let mut g = self.clone();
        for a in 0..n {
            let row = &self.edge[a * n..(a + 1) * n];
            let m = row.iter().copied().max().unwrap_or(0) as f64;
            for b in 0..n {
                if (row[b] as f64) < f * m {
                    g.edge[a * n + b] = 0;
                }
            }
        }
        let ms = self.start.iter().copied().max().unwrap_or(0) as f64;
        let me = self.end.iter().copied().max().unwrap_or(0) as f64;
        for a in 0..n {
            if (self.start[a] as f64) < f * ms {
                g.start[a] = 0;
            }
            if (self.end[a] as f64) < f * me {
                g.end[a] = 0;
            }
        }
        g
    }

    fn reach(&self) -> Vec<Vec<bool>> {
        let n = self.n();
        (0..n)
            .map(|s| {
                let mut seen = vec![false; n];
                let mut stack = vec![s];
                while let Some(x) = stack.pop() {
                    for y in 0..n {
                        if self.e(x, y) && !seen[y] {
                            seen[y] = true;
                            stack.push(y);
                        }
                    }
                }
                seen
            })
            .collect()
    }
}

struct Dsu(Vec<usize>);
impl Dsu {
    fn new(n: usize) -> Self {
        Dsu((0..n).collect())
    }
    fn find(&mut self, x: usize) -> usize {
        let mut r = x;
        while self.0[r] != r {
            r = self.0[r];
        }
        let mut y = x;
        while self.0[y] != r {
            let nx = self.0[y];
            self.0[y] = r;
            y = nx;
        }
        r
    }
    fn union(&mut self, a: usize, b: usize) {
        let (x, y) = (self.find(a), self.find(b));
        if x != y {
            self.0[x.max(y)] = x.min(y);
        }
    }
    /// Groups ordered by smallest member.
    fn groups(&mut self, n: usize) -> Vec<Vec<usize>> {
        let mut out: Vec<Vec<usize>> = Vec::new();
        let mut slot = vec![usize::MAX; n];
        for x in 0..n {
            let r = self.find(x);
            if slot[r] == usize::MAX {
                slot[r] = out.len();
                out.push(Vec::new());
            }
            out[slot[r]].push(x);
        }
        out
    }
}

/// Exclusive-choice cut.
pub fn xor_cut(g: &LocalDfg) -> Option<Vec<Vec<usize>>> {
    let n = g.n();
    let mut d = Dsu::new(n);
    for a in 0..n {
        for b in 0..n {
            if g.e(a, b) {
                d.union(a, b);
            }
        }
    }
    let gr = d.groups(n);
    (gr.len() > 1).then_some(gr)
}

/// Sequence cut (parts in order).
pub fn sequence_cut(g: &LocalDfg) -> Option<Vec<Vec<usize>>> {
    let n = g.n();
    let r = g.reach();
    let mut d = Dsu::new(n);
    // Strongly connected components: mutual reachability.
    for a in 0..n {
        for b in (a + 1)..n {
            if r[a][b] && r[b][a] {
                d.union(a, b);
            }
        }
    }
    // Merge every pair of activities that cannot reach each other (either way): they must share
    // a sequence part. Done per activity pair, not per merged group, so that an optional branch
    // (`F`) joins the whole alternative it is exclusive with (`Q -> A -> B`), even though the
    // members of that alternative reach one another.
    for a in 0..n {
        for b in (a + 1)..n {
            if !r[a][b] && !r[b][a] {
                d.union(a, b);
            }
        }
    }
    let mut groups = d.groups(n);
    if groups.len() < 2 {
        return None;
    }
    // Order: a part reached by fewer activities from outside comes first.
    let reached_by = |gr: &Vec<usize>| {
        (0..n)
            .filter(|x| !gr.contains(x) && gr.iter().any(|&y| r[*x][y]))
            .count()
    };
    groups.sort_by_key(|gr| (reached_by(gr), gr[0]));
    for i in 0..groups.len() {
        for j in (i + 1)..groups.len() {
            for &x in &groups[i] {
                for &y in &groups[j] {
                    if !r[x][y] || r[y][x] {
                        return None;
                    }
                }
            }
        }
    }
    Some(groups)
}

/// Parallel cut.
pub fn parallel_cut(g: &LocalDfg) -> Option<Vec<Vec<usize>>> {
    let n = g.n();
    let mut d = Dsu::new(n);
    for a in 0..n {
        for b in (a + 1)..n {
            if !(g.e(a, b) && g.e(b, a)) {
                d.union(a, b);
            }
        }
    }
    let groups = d.groups(n);
    if groups.len() < 2 {
        return None;
    }
    let complete =
        |gr: &Vec<usize>| gr.iter().any(|&x| g.start[x] > 0) && gr.iter().any(|&x| g.end[x] > 0);
    let mut full: Vec<Vec<usize>> = groups.iter().filter(|gr| complete(gr)).cloned().collect();
    if full.is_empty() {
        return None;
    }
    for gr in groups.iter().filter(|gr| !complete(gr)) {
        full[0].extend(gr.iter().copied());
    }
    full[0].sort_unstable();
    full.sort_by_key(|gr| gr[0]);
    (full.len() > 1).then_some(full)
}

/// Loop cut: `[body, redo1, ...]`.
pub fn loop_cut(g: &LocalDfg) -> Option<Vec<Vec<usize>>> {
    let n = g.n();
    let is_start: Vec<bool> = g.start.iter().map(|&c| c > 0).collect();
    let is_end: Vec<bool> = g.end.iter().map(|&c| c > 0).collect();
    let mut in_body: Vec<bool> = (0..n).map(|a| is_start[a] || is_end[a]).collect();
    let mut d = Dsu::new(n);
    for a in 0..n {
        for b in 0..n {
            if !in_body[a] && !in_body[b] && g.e(a, b) {
                d.union(a, b);
            }
        }
    }
    let comps: Vec<Vec<usize>> = d
        .groups(n)
        .into_iter()
        .filter(|gr| !in_body[gr[0]])
        .collect();
    let starts: Vec<usize> = (0..n).filter(|&a| is_start[a]).collect();
    let ends: Vec<usize> = (0..n).filter(|&a| is_end[a]).collect();
    let mut redo = Vec::new();
    for c in comps {
        let mut ok = true;
        for &y in &c {
            // Entries into the component.
            let from_body: Vec<usize> = (0..n).filter(|&x| in_body[x] && g.e(x, y)).collect();
            if from_body.iter().any(|&x| !is_end[x]) {
                ok = false;
            }
            if !from_body.is_empty() && !ends.iter().all(|&e| g.e(e, y)) {
                ok = false;
            }
            let to_body: Vec<usize> = (0..n).filter(|&x| in_body[x] && g.e(y, x)).collect();
            if to_body.iter().any(|&x| !is_start[x]) {
                ok = false;
            }
            if !to_body.is_empty() && !starts.iter().all(|&s| g.e(y, s)) {
                ok = false;
            }
        }
        // A redo part must be entered and left at all.
        let entered = c.iter().any(|&y| (0..n).any(|x| in_body[x] && g.e(x, y)));
        let left = c.iter().any(|&y| (0..n).any(|x| in_body[x] && g.e(y, x)));
        if ok && entered && left {
            redo.push(c);
        } else {
            for &y in &c {
                in_body[y] = true;
            }
        }
    }
    // Components merged into the body may connect to redo parts: drop those redo parts.
    let body: Vec<usize> = (0..n).filter(|&a| in_body[a]).collect();
    let redo: Vec<Vec<usize>> = redo
        .into_iter()
        .filter(|c| {
            c.iter().all(|&y| {
                body.iter()
                    .all(|&x| (!g.e(x, y) || is_end[x]) && (!g.e(y, x) || is_start[x]))
            })
        })
        .collect();
    if redo.is_empty() {
        return None;
    }
    let mut body: Vec<usize> = (0..n)
        .filter(|a| !redo.iter().any(|c| c.contains(a)))
        .collect();
    body.sort_unstable();
    let mut out = vec![body];
    out.extend(redo);
    Some(out)
}
