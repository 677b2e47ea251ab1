//! BPMN 2.0 XML export of process trees (OMG formal/2011-01-03, ISO/IEC 19510:2013).
//!
//! A process tree maps block by block onto a BPMN process: an activity becomes a `task`, a
//! sequence chains its children with `sequenceFlow`s, an exclusive choice becomes a pair of
//! `exclusiveGateway`s (split and join), a parallel block a pair of `parallelGateway`s, and a
//! loop an exclusive join before the body and an exclusive split after it, with the redo
//! children flowing back to the join. Silent steps become plain flows. The document holds the
//! semantic model only (`definitions` > `process`); it carries no diagram-interchange layout.

use std::collections::BTreeSet;

use crate::discover::tree::{NodeKind, ProcessTree};

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

struct Out {
    elements: Vec<String>,
    flows: BTreeSet<(usize, String, String)>,
    n: usize,
}

impl Out {
    fn id(&mut self, prefix: &str) -> String {
        self.n += 1;
        format!("{prefix}_{}", self.n)
    }
    fn flow(&mut self, a: &str, b: &str) {
        if !self.flows.iter().any(|(_, x, y)| x == a && y == b) {
            let k = self.flows.len();
            self.flows.insert((k, a.to_string(), b.to_string()));
        }
    }
    fn gateway(&mut self, kind: &str, dir: &str) -> String {
        let id = self.id(if kind == "parallelGateway" {
            "and"
        } else {
            "xor"
        });
        self.elements.push(format!(
            "    <{kind} id=\"{id}\" gatewayDirection=\"{dir}\"/>"
        ));
        id
    }
}

fn emit(t: &ProcessTree, x: usize, from: String, o: &mut Out) -> String {
    let node = &t.nodes[x];
    match &node.kind {
        NodeKind::Activity(a) => {
            let id = o.id("task");
            o.elements
                .push(format!("    <task id=\"{id}\" name=\"{}\"/>", esc(a)));
            o.flow(&from, &id);
            id
        }
        NodeKind::Silent => from,
        NodeKind::Sequence => node
            .children
            .iter()
            .fold(from, |cur, &c| emit(t, c, cur, o)),
        NodeKind::Choice | NodeKind::Parallel => {
            let kind = if node.kind == NodeKind::Choice {
                "exclusiveGateway"
            } else {
                "parallelGateway"
            };
            let split = o.gateway(kind, "Diverging");
            o.flow(&from, &split);
            let join = o.gateway(kind, "Converging");
            for &c in &node.children {
                let end = emit(t, c, split.clone(), o);
                o.flow(&end, &join);
            }
            join
        }
        NodeKind::Loop => {
            let join = o.gateway("exclusiveGateway", "Converging");
            o.flow(&from, &join);
            let body_end = emit(t, node.children[0], join.clone(), o);
            let split = o.gateway("exclusiveGateway", "Diverging");
            o.flow(&body_end, &split);
            for &r in &node.children[1..] {
                let end = emit(t, r, split.clone(), o);
                o.flow(&end, &join);
            }
            split
        }
    }
}

/// The BPMN 2.0 XML text of a process tree.
pub fn tree_to_bpmn(t: &ProcessTree, name: &str) -> String {
    let mut o = Out {
        elements: Vec::new(),
        flows: BTreeSet::new(),
        n: 0,
    };
    o.elements
        .push("    <startEvent id=\"start\" name=\"start\"/>".to_string());
    let last = emit(t, t.root, "start".to_string(), &mut o);
    o.elements
        .push("    <endEvent id=\"end\" name=\"end\"/>".to_string());
    o.flow(&last, "end");
    let mut s = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    s.push_str(
        "<definitions xmlns=\"http://www.omg.org/spec/BPMN/20100524/MODEL\" \
         id=\"definitions_1\" targetNamespace=\"https://tracemill.invalid/bpmn\" \
         exporter=\"tracemill\">\n",
    );
    s.push_str(&format!(
        "  <process id=\"process_1\" name=\"{}\" isExecutable=\"false\">\n",
        esc(name)
    ));
    // Incoming/outgoing references are optional in the schema; flows name both ends.
    for e in &o.elements {
        s.push_str(e);
        s.push('\n');
    }
    let mut flows: Vec<&(usize, String, String)> = o.flows.iter().collect();
    flows.sort_by_key(|f| f.0);
    for (k, a, b) in flows {
        s.push_str(&format!(
            "    <sequenceFlow id=\"flow_{k}\" sourceRef=\"{a}\" targetRef=\"{b}\"/>\n"
        ));
    }
    s.push_str("  </process>\n</definitions>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::tree::Tree;

    #[test]
    fn blocks_map_to_gateways() {
        let t = Tree::Op(
            NodeKind::Sequence,
            vec![
                Tree::Act("a".into()),
                Tree::Op(
                    NodeKind::Parallel,
                    vec![Tree::Act("b".into()), Tree::Act("c".into())],
                ),
                Tree::Op(NodeKind::Choice, vec![Tree::Tau, Tree::Act("d".into())]),
                Tree::Op(NodeKind::Loop, vec![Tree::Act("e".into()), Tree::Tau]),
            ],
        );
        let x = tree_to_bpmn(&ProcessTree::from_tree(&t), "demo");
        assert_eq!(x.matches("<task ").count(), 5);
        assert_eq!(x.matches("<parallelGateway").count(), 2);
        assert_eq!(x.matches("<exclusiveGateway").count(), 4);
        assert!(x.contains("sourceRef=\"start\""));
        assert!(x.contains("targetRef=\"end\""));
    }
}
