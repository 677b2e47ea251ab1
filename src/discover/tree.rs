//! Process trees and their translation to sound workflow nets.
//!
//! A process tree (block-structured model; Leemans, Fahland & van der Aalst 2013, Petri Nets,
//! LNCS 7927) has activities and silent steps (tau) as leaves and operators as inner nodes:
//! * *sequence* `→(A, B, ...)`: the children one after the other;
//! * *exclusive choice* `×(A, B, ...)`: exactly one child;
//! * *parallel* `∧(A, B, ...)`: all children, their events interleaved;
//! * *loop* `⟲(body, redo1, ..., redon)`: the body, then any number of times one redo child
//!   followed by the body again.
//!
//! [`ProcessTree::to_petri_net`] translates block by block: every node becomes a fragment
//! between an entry place and an exit place; a parallel block gets a silent split and a silent
//! join, a loop gets a silent entry and exit around its body/redo cycle. Each fragment is a
//! single-entry single-exit sound net, and composing sound blocks this way keeps the whole net
//! sound (van der Aalst 1997 on well-structured workflow nets), so the result is a sound workflow
//! net with the language of the tree.

use std::collections::HashMap;
use std::fmt;

use crate::discover::petri::PetriNet;
use crate::error::{TmError, TmResult};

/// The kind of a tree node.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum NodeKind {
    /// A leaf recording an activity.
    Activity(String),
    /// A silent leaf (tau).
    Silent,
    /// Children in order.
    Sequence,
    /// Exactly one child.
    Choice,
    /// All children, interleaved.
    Parallel,
    /// Body, then (redo, body)* with one redo child each round.
    Loop,
}

impl NodeKind {
    /// Numeric code used across the Python boundary.
    pub fn code(&self) -> u8 {
        match self {
            NodeKind::Activity(_) => 0,
            NodeKind::Silent => 1,
            NodeKind::Sequence => 2,
            NodeKind::Choice => 3,
            NodeKind::Parallel => 4,
            NodeKind::Loop => 5,
        }
    }
    /// The trade word for the operator.
    pub fn word(&self) -> &'static str {
        match self {
            NodeKind::Activity(_) => "activity",
            NodeKind::Silent => "silent",
            NodeKind::Sequence => "sequence",
            NodeKind::Choice => "choice",
            NodeKind::Parallel => "parallel",
            NodeKind::Loop => "loop",
        }
    }
}

/// One node with its children (indices into [`ProcessTree::nodes`]).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TreeNode {
    /// Operator or leaf.
    pub kind: NodeKind,
    /// Children, in order.
    pub children: Vec<usize>,
}

/// A process tree stored as a node arena.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ProcessTree {
    /// All nodes.
    pub nodes: Vec<TreeNode>,
    /// Index of the root.
    pub root: usize,
}

/// A recursive builder form, convenient for tests and for the discovery recursion.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Tree {
    /// Activity leaf.
    Act(String),
    /// Silent leaf.
    Tau,
    /// Operator with children.
    Op(NodeKind, Vec<Tree>),
}

impl Tree {
    /// Flatten nested operators of the same kind (not loops), drop single-child operators.
    pub fn simplify(self) -> Tree {
        match self {
            Tree::Op(k, ch) => {
                let ch: Vec<Tree> = ch.into_iter().map(Tree::simplify).collect();
                if k == NodeKind::Loop {
                    return Tree::Op(k, ch);
                }
                let mut flat = Vec::new();
                for c in ch {
                    match c {
                        Tree::Op(k2, g) if k2 == k => flat.extend(g),
                        Tree::Tau if k == NodeKind::Sequence || k == NodeKind::Parallel => {}
                        other => flat.push(other),
                    }
                }
                match flat.len() {
                    0 => Tree::Tau,
                    1 => flat.pop().unwrap_or(Tree::Tau),
                    _ => Tree::Op(k, flat),
                }
            }
            t => t,
        }
    }
}

impl ProcessTree {
    /// Build the arena form from the recursive form.
    pub fn from_tree(t: &Tree) -> ProcessTree {
        fn add(t: &Tree, nodes: &mut Vec<TreeNode>) -> usize {
            match t {
                Tree::Act(a) => {
                    nodes.push(TreeNode {
                        kind: NodeKind::Activity(a.clone()),
                        children: vec![],
                    });
                    nodes.len() - 1
                }
                Tree::Tau => {
                    nodes.push(TreeNode {
                        kind: NodeKind::Silent,
                        children: vec![],
                    });
                    nodes.len() - 1
                }
                Tree::Op(k, ch) => {
                    nodes.push(TreeNode {
                        kind: k.clone(),
                        children: vec![],
                    });
                    let me = nodes.len() - 1;
                    let ids: Vec<usize> = ch.iter().map(|c| add(c, nodes)).collect();
                    nodes[me].children = ids;
                    me
                }
            }
        }
        let mut nodes = Vec::new();
        let root = add(t, &mut nodes);
        ProcessTree { nodes, root }
    }

    /// Build from parallel arrays: kind codes, parent index (-1 for the root) and labels.
    /// Children keep the order in which they appear.
    pub fn from_arrays(kind: &[u8], parent: &[i64], label: &[String]) -> TmResult<ProcessTree> {
        let n = kind.len();
        if n == 0 || parent.len() != n || label.len() != n {
            return Err(TmError::data(format!(
                "a process tree needs equal, non-empty kind/parent/label arrays; got {}, {}, {}",
                n,
                parent.len(),
                label.len()
            )));
        }
        let mut nodes: Vec<TreeNode> = Vec::with_capacity(n);
        for i in 0..n {
            let k = match kind[i] {
                0 => NodeKind::Activity(label[i].clone()),
                1 => NodeKind::Silent,
                2 => NodeKind::Sequence,
                3 => NodeKind::Choice,
                4 => NodeKind::Parallel,
                5 => NodeKind::Loop,
                x => {
                    return Err(TmError::data(format!(
                        "process tree node {i} has kind code {x}; expected 0-5"
                    )))
                }
            };
            nodes.push(TreeNode {
                kind: k,
                children: vec![],
            });
        }
        let mut root = None;
        for (i, &p) in parent.iter().enumerate() {
            if p < 0 {
                if root.replace(i).is_some() {
                    return Err(TmError::data("a process tree must have exactly one root"));
                }
            } else if (p as usize) < n && p as usize != i {
                nodes[p as usize].children.push(i);
            } else {
                return Err(TmError::data(format!(
                    "process tree node {i} has parent {p}, outside 0..{n}"
                )));
            }
        }
        let root = root.ok_or_else(|| TmError::data("a process tree must have a root"))?;
        let t = ProcessTree { nodes, root };
        t.check()?;
        Ok(t)
    }

    /// Check arities (operators need children, leaves none, loops at least two) and that every
    /// node hangs under the root exactly once.
    pub fn check(&self) -> TmResult<()> {
        let mut seen = vec![false; self.nodes.len()];
        let mut stack = vec![self.root];
        while let Some(x) = stack.pop() {
            if seen[x] {
                return Err(TmError::data(format!(
                    "process tree node {x} is reached twice"
                )));
            }
            seen[x] = true;
            let nd = &self.nodes[x];
            let nch = nd.children.len();
            match nd.kind {
                NodeKind::Activity(_) | NodeKind::Silent if nch > 0 => {
                    return Err(TmError::data(format!("process tree leaf {x} has children")))
                }
                NodeKind::Loop if nch < 2 => {
                    return Err(TmError::data(format!(
                        "loop node {x} needs a body and at least one redo child; has {nch}"
                    )))
                }
                NodeKind::Sequence | NodeKind::Choice | NodeKind::Parallel if nch == 0 => {
                    return Err(TmError::data(format!(
                        "{} node {x} has no children",
                        nd.kind.word()
                    )))
                }
                _ => {}
            }
            stack.extend(nd.children.iter().copied());
        }
        if let Some(i) = seen.iter().position(|s| !s) {
            return Err(TmError::data(format!(
                "process tree node {i} is not under the root"
            )));
        }
        Ok(())
    }

    /// Parent index of each node (-1 for the root).
    pub fn parents(&self) -> Vec<i64> {
        let mut p = vec![-1i64; self.nodes.len()];
        for (i, n) in self.nodes.iter().enumerate() {
            for &c in &n.children {
                p[c] = i as i64;
            }
        }
        p
    }

    /// Translate into a sound workflow net (initial marking: `source`, final: `sink`).
    pub fn to_petri_net(&self) -> PetriNet {
        let mut net = PetriNet::new();
        let src = net.add_place("source");
        let sink = net.add_place("sink");
        net.initial_marking[src] = 1;
        net.final_marking[sink] = 1;
        let mut label_uses: HashMap<String, usize> = HashMap::new();
        let mut n_tau = 0usize;
        let mut n_place = 0usize;
        self.emit(
            self.root,
            src,
            sink,
            &mut net,
            &mut label_uses,
            &mut n_tau,
            &mut n_place,
        );
        net
    }

    #[allow(clippy::only_used_in_recursion)]
    fn emit(
        &self,
        x: usize,
        entry: usize,
        exit: usize,
        net: &mut PetriNet,
        uses: &mut HashMap<String, usize>,
        n_tau: &mut usize,
        n_place: &mut usize,
    ) {
        let place = |net: &mut PetriNet, n_place: &mut usize| {
            *n_place += 1;
            net.add_place(format!("p{}", *n_place))
        };
        let tau = |net: &mut PetriNet, n_tau: &mut usize| {
            *n_tau += 1;
            net.add_transition(format!("tau_{}", *n_tau), None)
        };
        let node = &self.nodes[x];
        match &node.kind {
            NodeKind::Activity(a) => {
                let k = uses.entry(a.clone()).or_insert(0);
                *k += 1;
                let name = if *k == 1 {
                    a.clone()
                } else {
                    format!("{a}#{k}")
                };
                let t = net.add_transition(name, Some(a.clone()));
                net.arc_in(entry, t);
                net.arc_out(t, exit);
            }
            NodeKind::Silent => {
                let t = tau(net, n_tau);
                net.arc_in(entry, t);
                net.arc_out(t, exit);
            }
            NodeKind::Sequence => {
                let k = node.children.len();
                let mut cur = entry;
                for (i, &c) in node.children.iter().enumerate() {
                    let nxt = if i + 1 == k {
                        exit
                    } else {
                        place(net, n_place)
                    };
                    self.emit(c, cur, nxt, net, uses, n_tau, n_place);
                    cur = nxt;
                }
            }
            NodeKind::Choice => {
                for &c in &node.children {
                    self.emit(c, entry, exit, net, uses, n_tau, n_place);
                }
            }
            NodeKind::Parallel => {
                let split = tau(net, n_tau);
                let join = tau(net, n_tau);
                net.arc_in(entry, split);
                net.arc_out(join, exit);
                for &c in &node.children {
                    let a = place(net, n_place);
                    let b = place(net, n_place);
                    net.arc_out(split, a);
                    net.arc_in(b, join);
                    self.emit(c, a, b, net, uses, n_tau, n_place);
                }
            }
            NodeKind::Loop => {
                let start = place(net, n_place);
                let end = place(net, n_place);
                let t_in = tau(net, n_tau);
                let t_out = tau(net, n_tau);
                net.arc_in(entry, t_in);
                net.arc_out(t_in, start);
                net.arc_in(end, t_out);
                net.arc_out(t_out, exit);
                let body = node.children[0];
                self.emit(body, start, end, net, uses, n_tau, n_place);
                for &r in &node.children[1..] {
                    self.emit(r, end, start, net, uses, n_tau, n_place);
                }
            }
        }
    }

    fn fmt_node(&self, x: usize, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let n = &self.nodes[x];
        match &n.kind {
            NodeKind::Activity(a) => write!(f, "'{}'", a.replace('\'', "\\'")),
            NodeKind::Silent => write!(f, "tau"),
            k => {
                write!(f, "{}(", k.word())?;
                for (i, &c) in n.children.iter().enumerate() {
                    if i > 0 {
                        write!(f, ", ")?;
                    }
                    self.fmt_node(c, f)?;
                }
                write!(f, ")")
            }
        }
    }
}

impl fmt::Display for ProcessTree {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        self.fmt_node(self.root, f)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn act(s: &str) -> Tree {
        Tree::Act(s.into())
    }

    #[test]
    fn translation_is_workflow_net() {
        let t = Tree::Op(
            NodeKind::Sequence,
            vec![
                act("a"),
                Tree::Op(NodeKind::Parallel, vec![act("b"), act("c")]),
                Tree::Op(NodeKind::Loop, vec![act("d"), Tree::Tau]),
            ],
        );
        let pt = ProcessTree::from_tree(&t);
        assert_eq!(
            pt.to_string(),
            "sequence('a', parallel('b', 'c'), loop('d', tau))"
        );
        let net = pt.to_petri_net();
        net.validate().unwrap();
        assert!(net.workflow_ends().is_some());
        let back = ProcessTree::from_arrays(
            &pt.nodes.iter().map(|n| n.kind.code()).collect::<Vec<_>>(),
            &pt.parents(),
            &pt.nodes
                .iter()
                .map(|n| match &n.kind {
                    NodeKind::Activity(a) => a.clone(),
                    _ => String::new(),
                })
                .collect::<Vec<_>>(),
        )
        .unwrap();
        assert_eq!(back.to_string(), pt.to_string());
    }

    #[test]
    fn simplify_flattens() {
        let t = Tree::Op(
            NodeKind::Sequence,
            vec![
                Tree::Op(NodeKind::Sequence, vec![act("a"), act("b")]),
                Tree::Op(NodeKind::Choice, vec![act("c")]),
            ],
        )
        .simplify();
        assert_eq!(
            t,
            Tree::Op(NodeKind::Sequence, vec![act("a"), act("b"), act("c")])
        );
    }

    #[test]
    fn bad_arrays() {
        assert!(ProcessTree::from_arrays(&[5, 0], &[-1, 0], &["".into(), "a".into()]).is_err());
        assert!(ProcessTree::from_arrays(&[9], &[-1], &["".into()]).is_err());
    }
}
