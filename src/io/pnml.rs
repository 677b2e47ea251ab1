//! PNML (ISO/IEC 15909-2, the Petri Net Markup Language) reading and writing for
//! place/transition nets.
//!
//! Structure (Hillah, Kindler, Kordon, Petrucci & Trèves, "A primer on the Petri Net Markup
//! Language and ISO/IEC 15909-2"): a `pnml` root holds `net` elements (attribute `type`, the P/T
//! type being `http://www.pnml.org/version-2009/grammar/ptnet`); a net holds `page`s (which may
//! nest) with `place`, `transition` and `arc` objects (ids; arcs have `source` and `target`),
//! `referencePlace`/`referenceTransition` (attribute `ref`) standing for nodes on other pages, and
//! labels: `name/text`, place `initialMarking/text`, arc `inscription/text`. `graphics` and
//! `toolspecific` may appear anywhere and are ignored unless they are ours.
//!
//! The core standard has no final marking and no silent transitions. tracemill writes them in
//! its own `toolspecific` block (tool `tracemill`, version `1`):
//! * in a `net`: `<toolspecific tool="tracemill" version="1"><finalMarking place="ID"
//!   tokens="N"/>...</toolspecific>`;
//! * in a `transition`: `<toolspecific tool="tracemill" version="1"><silent/></toolspecific>`.
//!
//! A transition's label is its `name/text` (or its id when unnamed). Reading refuses a DOCTYPE
//! (entity expansion is a classic XML attack and PNML needs none), other net types than P/T
//! nets, and anything malformed, naming the element and the line.

use std::collections::HashMap;

use quick_xml::events::{BytesStart, Event};
use quick_xml::Reader;

use crate::discover::petri::{NetArc, PetriNet};
use crate::error::{TmError, TmResult};

/// The P/T net type URI of the 2009 grammar.
pub const PTNET_TYPE: &str = "http://www.pnml.org/version-2009/grammar/ptnet";
/// The PNML namespace.
pub const PNML_NS: &str = "http://www.pnml.org/version-2009/grammar/pnml";
const TOOL: &str = "tracemill";

#[derive(Debug, Default)]
struct El {
    name: String,
    attrs: Vec<(String, String)>,
    children: Vec<El>,
    text: String,
    line: u64,
}

impl El {
    fn attr(&self, k: &str) -> Option<&str> {
        self.attrs
            .iter()
            .find(|(a, _)| a == k)
            .map(|(_, v)| v.as_str())
    }
    fn child(&self, k: &str) -> Option<&El> {
        self.children.iter().find(|c| c.name == k)
    }
    /// Text of `<k><text>...</text></k>`.
    fn label_text(&self, k: &str) -> Option<String> {
        self.child(k)
            .and_then(|c| c.child("text"))
            .map(|t| t.text.trim().to_string())
    }
    fn need(&self, k: &str) -> TmResult<&str> {
        self.attr(k).ok_or_else(|| {
            TmError::format(
                Some(self.line),
                format!(
                    "PNML line {}: element <{}> lacks the required attribute '{k}'",
                    self.line, self.name
                ),
            )
        })
    }
}

fn unescape(s: &str, line: u64) -> TmResult<String> {
    if !s.contains('&') {
        return Ok(s.to_string());
    }
    let mut out = String::with_capacity(s.len());
    let mut rest = s;
    while let Some(i) = rest.find('&') {
        out.push_str(&rest[..i]);
        let j = rest[i..].find(';').ok_or_else(|| {
            TmError::format(
                Some(line),
                format!("PNML line {line}: unterminated '&' reference"),
            )
        })?;
        out.push_str(&entity(&rest[i + 1..i + j], line)?);
        rest = &rest[i + j + 1..];
    }
    out.push_str(rest);
    Ok(out)
}

fn entity(name: &str, line: u64) -> TmResult<String> {
    let bad = || {
        TmError::format(
            Some(line),
            format!("PNML line {line}: unknown entity reference '&{name};'"),
        )
    };
    Ok(match name {
        "amp" => "&".into(),
        "lt" => "<".into(),
        "gt" => ">".into(),
        "quot" => "\"".into(),
        "apos" => "'".into(),
        n if n.starts_with("#x") => {
            let c = u32::from_str_radix(&n[2..], 16).map_err(|_| bad())?;
            char::from_u32(c).ok_or_else(bad)?.to_string()
        }
        n if n.starts_with('#') => {
            let c: u32 = n[1..].parse().map_err(|_| bad())?;
            char::from_u32(c).ok_or_else(bad)?.to_string()
        }
        _ => return Err(bad()),
    })
}

fn local(name: &[u8]) -> String {
    let s = String::from_utf8_lossy(name);
    match s.rfind(':') {
        Some(i) => s[i + 1..].to_string(),
        None => s.to_string(),
    }
}

fn start_el(e: &BytesStart<'_>, line: u64) -> TmResult<El> {
    let mut attrs = Vec::new();
    for a in e.attributes() {
        let a = a.map_err(|err| {
            TmError::format(
                Some(line),
                format!("PNML line {line}: bad attribute: {err}"),
            )
        })?;
        let v = String::from_utf8_lossy(&a.value).to_string();
        attrs.push((local(a.key.as_ref()), unescape(&v, line)?));
    }
    Ok(El {
        name: local(e.name().as_ref()),
        attrs,
        children: Vec::new(),
        text: String::new(),
        line,
    })
}

fn parse_tree(xml: &str) -> TmResult<El> {
    let mut r = Reader::from_str(xml);
    r.config_mut().check_end_names = true;
    let mut stack: Vec<El> = vec![El::default()];
    let line_at = |pos: u64| {
        1 + xml.as_bytes()[..(pos as usize).min(xml.len())]
            .iter()
            .filter(|&&b| b == b'\n')
            .count() as u64
    };
    loop {
        let pos = r.buffer_position();
        let ev = r.read_event().map_err(|e| {
            let l = line_at(r.error_position());
            TmError::format(Some(l), format!("PNML line {l}: malformed XML: {e}"))
        })?;
        let line = line_at(pos);
        match ev {
            Event::Start(e) => stack.push(start_el(&e, line)?),
            Event::Empty(e) => {
                let el = start_el(&e, line)?;
                if let Some(top) = stack.last_mut() {
                    top.children.push(el);
                }
            }
            Event::End(_) => {
                let el = stack.pop().ok_or_else(|| {
                    TmError::format(Some(line), format!("PNML line {line}: unexpected end tag"))
                })?;
                match stack.last_mut() {
                    Some(top) => top.children.push(el),
                    None => {
                        return Err(TmError::format(
                            Some(line),
                            format!("PNML line {line}: unexpected end tag"),
                        ))
                    }
                }
            }
            Event::Text(t) => {
                if let Some(top) = stack.last_mut() {
                    top.text.push_str(&String::from_utf8_lossy(&t));
                }
            }
            Event::CData(t) => {
                if let Some(top) = stack.last_mut() {
                    top.text.push_str(&String::from_utf8_lossy(&t));
                }
            }
            Event::GeneralRef(g) => {
                let name = String::from_utf8_lossy(&g).to_string();
                let s = entity(&name, line)?;
                if let Some(top) = stack.last_mut() {
                    top.text.push_str(&s);
                }
            }
            Event::DocType(_) => {
                return Err(TmError::format(
                    Some(line),
                    format!(
                        "PNML line {line}: a DOCTYPE declaration is refused (entity definitions \
                         can expand without bound); remove it"
                    ),
                ))
            }
            Event::Eof => break,
            _ => {}
        }
    }
    if stack.len() != 1 {
        let open = stack.last().map(|e| e.name.clone()).unwrap_or_default();
        return Err(TmError::format(
            None,
            format!("PNML document is truncated: element <{open}> is not closed"),
        ));
    }
    let mut doc = stack.pop().unwrap_or_default();
    doc.children
        .pop()
        .ok_or_else(|| TmError::format(None, "PNML document has no root element"))
}

fn nat(text: &str, what: &str, el: &El) -> TmResult<u32> {
    text.trim().parse::<u32>().map_err(|_| {
        TmError::format(
            Some(el.line),
            format!(
                "PNML line {}: <{}> {what} must be a natural number; got '{}'",
                el.line,
                el.name,
                text.trim()
            ),
        )
    })
}

fn is_ours(el: &El) -> bool {
    el.name == "toolspecific" && el.attr("tool") == Some(TOOL)
}

#[derive(Default)]
struct Collect<'a> {
    places: Vec<&'a El>,
    transitions: Vec<&'a El>,
    arcs: Vec<&'a El>,
    refs: HashMap<String, (String, u64)>,
}

fn walk<'a>(page: &'a El, c: &mut Collect<'a>) -> TmResult<()> {
    for ch in &page.children {
        match ch.name.as_str() {
            "place" => c.places.push(ch),
            "transition" => c.transitions.push(ch),
            "arc" => c.arcs.push(ch),
            "page" => walk(ch, c)?,
            "referencePlace" | "referenceTransition" => {
                c.refs.insert(
                    ch.need("id")?.to_string(),
                    (ch.need("ref")?.to_string(), ch.line),
                );
            }
            _ => {}
        }
    }
    Ok(())
}

/// Read the net of a PNML document (see [`read_pnml_net`]; a document with several nets is
/// refused, naming their ids).
pub fn read_pnml(xml: &str) -> TmResult<PetriNet> {
    read_pnml_net(xml, None)
}

/// Read one net of a PNML document: the one with id `net`, or the only one when `net` is
/// `None` (several nets then give an error listing their ids, never a silent choice).
pub fn read_pnml_net(xml: &str, net: Option<&str>) -> TmResult<PetriNet> {
    let root = parse_tree(xml)?;
    if root.name != "pnml" {
        return Err(TmError::format(
            Some(root.line),
            format!(
                "PNML line {}: the root element must be <pnml>; got <{}>",
                root.line, root.name
            ),
        ));
    }
    let nets: Vec<&El> = root.children.iter().filter(|c| c.name == "net").collect();
    let ids = || {
        nets.iter()
            .map(|n| format!("'{}'", n.attr("id").unwrap_or("?")))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let net_el = match (net, nets.as_slice()) {
        (_, []) => {
            return Err(TmError::format(
                Some(root.line),
                "PNML document has no <net> element",
            ))
        }
        (None, [one]) => *one,
        (None, _) => {
            return Err(TmError::format(
                Some(root.line),
                format!(
                    "PNML document holds {} nets ({}); choose one by its id",
                    nets.len(),
                    ids()
                ),
            ))
        }
        (Some(id), _) => *nets
            .iter()
            .find(|n| n.attr("id") == Some(id))
            .ok_or_else(|| {
                TmError::format(
                    Some(root.line),
                    format!(
                        "PNML document has no net with id '{id}'; its nets are {}",
                        ids()
                    ),
                )
            })?,
    };
    if let Some(t) = net_el.attr("type") {
        if !(t == PTNET_TYPE || t.trim_end_matches('/').ends_with("/ptnet")) {
            return Err(TmError::format(
                Some(net_el.line),
                format!(
                    "PNML line {}: <net type=\"{t}\"> is not supported; tracemill reads \
                     place/transition nets ({PTNET_TYPE})",
                    net_el.line
                ),
            ));
        }
    }
    let mut c = Collect::default();
    walk(net_el, &mut c)?;
    if c.places.is_empty() && c.transitions.is_empty() {
        return Err(TmError::format(
            Some(net_el.line),
            format!(
                "PNML line {}: the <net> has no <page> with places or transitions",
                net_el.line
            ),
        ));
    }
    let mut net = PetriNet::new();
    let mut place_ix: HashMap<String, usize> = HashMap::new();
    let mut trans_ix: HashMap<String, usize> = HashMap::new();
    for p in &c.places {
        let id = p.need("id")?.to_string();
        let i = net.add_place(id.clone());
        if let Some(m) = p.label_text("initialMarking") {
            net.initial_marking[i] = nat(&m, "initialMarking", p)?;
        }
        if place_ix.insert(id.clone(), i).is_some() {
            return Err(TmError::format(
                Some(p.line),
                format!("PNML line {}: place id '{id}' is used twice", p.line),
            ));
        }
    }
    for t in &c.transitions {
        let id = t.need("id")?.to_string();
        let silent = t
            .children
            .iter()
            .any(|x| is_ours(x) && x.child("silent").is_some());
        let label = if silent {
            None
        } else {
            Some(t.label_text("name").unwrap_or_else(|| id.clone()))
        };
        let i = net.add_transition(id.clone(), label);
        if trans_ix.insert(id.clone(), i).is_some() || place_ix.contains_key(&id) {
            return Err(TmError::format(
                Some(t.line),
                format!("PNML line {}: node id '{id}' is used twice", t.line),
            ));
        }
    }
    let resolve = |id: &str, line: u64| -> TmResult<String> {
        let mut cur = id.to_string();
        for _ in 0..=c.refs.len() {
            match c.refs.get(&cur) {
                Some((r, _)) => cur = r.clone(),
                None => return Ok(cur),
            }
        }
        Err(TmError::format(
            Some(line),
            format!("PNML line {line}: reference node '{id}' refers to itself in a cycle"),
        ))
    };
    for a in &c.arcs {
        let s = resolve(a.need("source")?, a.line)?;
        let t = resolve(a.need("target")?, a.line)?;
        let weight = match a.label_text("inscription") {
            Some(w) => nat(&w, "inscription", a)?,
            None => 1,
        };
        if weight == 0 {
            return Err(TmError::format(
                Some(a.line),
                format!("PNML line {}: <arc> inscription must be positive", a.line),
            ));
        }
        let arc = match (
            place_ix.get(&s),
            trans_ix.get(&t),
            trans_ix.get(&s),
            place_ix.get(&t),
        ) {
            (Some(&p), Some(&tr), _, _) => NetArc {
                place: p,
                transition: tr,
                into_transition: true,
                weight,
            },
            (_, _, Some(&tr), Some(&p)) => NetArc {
                place: p,
                transition: tr,
                into_transition: false,
                weight,
            },
            _ => {
                return Err(TmError::format(
                    Some(a.line),
                    format!(
                        "PNML line {}: <arc id=\"{}\"> must join a place and a transition; \
                         source '{s}' and target '{t}' are not such a pair of known nodes",
                        a.line,
                        a.attr("id").unwrap_or("?")
                    ),
                ))
            }
        };
        net.arcs.push(arc);
    }
    for ts in net_el.children.iter().filter(|x| is_ours(x)) {
        for fm in ts.children.iter().filter(|x| x.name == "finalMarking") {
            let pid = fm.need("place")?;
            let &p = place_ix.get(pid).ok_or_else(|| {
                TmError::format(
                    Some(fm.line),
                    format!(
                        "PNML line {}: <finalMarking> names unknown place '{pid}'",
                        fm.line
                    ),
                )
            })?;
            net.final_marking[p] = nat(fm.attr("tokens").unwrap_or("1"), "tokens", fm)?;
        }
    }
    // Show names from <name><text> when they are unique, ids otherwise.
    let named = |els: &[&El]| -> Option<Vec<String>> {
        let names: Vec<String> = els.iter().filter_map(|e| e.label_text("name")).collect();
        let uniq: std::collections::HashSet<&String> = names.iter().collect();
        (names.len() == els.len() && uniq.len() == names.len()).then_some(names)
    };
    if let Some(n) = named(&c.places) {
        net.places = n;
    }
    if let Some(n) = named(&c.transitions) {
        for (t, s) in net.transitions.iter_mut().zip(n) {
            t.name = s;
        }
    }
    net.validate()?;
    Ok(net)
}

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Write `net` as a PNML document (one P/T net on one page).
pub fn write_pnml(net: &PetriNet, name: &str) -> TmResult<String> {
    net.validate()?;
    let mut s = String::new();
    s.push_str("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    s.push_str(&format!("<pnml xmlns=\"{PNML_NS}\">\n"));
    s.push_str(&format!(
        "  <net id=\"net1\" type=\"{PTNET_TYPE}\">\n    <name><text>{}</text></name>\n",
        esc(name)
    ));
    s.push_str("    <page id=\"page1\">\n");
    // Ids: the names, made XML-safe by escaping; places and transitions share one id space.
    for (i, p) in net.places.iter().enumerate() {
        s.push_str(&format!(
            "      <place id=\"{}\">\n        <name><text>{}</text></name>\n",
            format_args!("p{i}"),
            esc(p)
        ));
        if net.initial_marking[i] > 0 {
            s.push_str(&format!(
                "        <initialMarking><text>{}</text></initialMarking>\n",
                net.initial_marking[i]
            ));
        }
        s.push_str("      </place>\n");
    }
    for (i, t) in net.transitions.iter().enumerate() {
        let shown = t.label.clone().unwrap_or_else(|| t.name.clone());
        s.push_str(&format!(
            "      <transition id=\"t{i}\">\n        <name><text>{}</text></name>\n",
            esc(&shown)
        ));
        if t.label.is_none() {
            s.push_str(&format!(
                "        <toolspecific tool=\"{TOOL}\" version=\"1\"><silent/></toolspecific>\n"
            ));
        }
        s.push_str("      </transition>\n");
    }
    for (k, a) in net.arcs.iter().enumerate() {
        let p = format!("p{}", a.place);
        let t = format!("t{}", a.transition);
        let (src, dst) = if a.into_transition { (p, t) } else { (t, p) };
        s.push_str(&format!(
            "      <arc id=\"a{k}\" source=\"{src}\" target=\"{dst}\""
        ));
        if a.weight > 1 {
            s.push_str(&format!(
                ">\n        <inscription><text>{}</text></inscription>\n      </arc>\n",
                a.weight
            ));
        } else {
            s.push_str("/>\n");
        }
    }
    s.push_str("    </page>\n");
    if net.final_marking.iter().any(|&x| x > 0) {
        s.push_str(&format!(
            "    <toolspecific tool=\"{TOOL}\" version=\"1\">\n"
        ));
        for (i, &k) in net.final_marking.iter().enumerate() {
            if k > 0 {
                s.push_str(&format!(
                    "      <finalMarking place=\"{}\" tokens=\"{k}\"/>\n",
                    format_args!("p{i}")
                ));
            }
        }
        s.push_str("    </toolspecific>\n");
    }
    s.push_str("  </net>\n</pnml>\n");
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::discover::alpha::alpha_net;
    use crate::discover::testlog::running_example;

    #[test]
    fn several_nets_need_a_choice() {
        let one = |id: &str| {
            format!(
                "<net id=\"{id}\" type=\"{PTNET_TYPE}\"><page id=\"g\">\
                 <place id=\"p_{id}\"/></page></net>"
            )
        };
        let doc = format!("<pnml>{}{}</pnml>", one("a"), one("b"));
        let e = read_pnml(&doc).unwrap_err().to_string();
        assert!(e.contains("2 nets ('a', 'b')"), "{e}");
        let b = read_pnml_net(&doc, Some("b")).unwrap();
        assert_eq!(b.places, vec!["p_b".to_string()]);
        let e = read_pnml_net(&doc, Some("c")).unwrap_err().to_string();
        assert!(e.contains("no net with id 'c'"), "{e}");
    }

    #[test]
    fn round_trip() {
        let mut net = alpha_net(&running_example(), 1000).unwrap();
        net.add_transition("skip & <go>", None);
        let x = write_pnml(&net, "demo").unwrap();
        let back = read_pnml(&x).unwrap();
        assert_eq!(back, net);
    }

    #[test]
    fn refuses_doctype_and_other_types() {
        let e = read_pnml("<?xml version=\"1.0\"?>\n<!DOCTYPE pnml [<!ENTITY a \"b\">]>\n<pnml/>")
            .unwrap_err();
        assert!(e.to_string().contains("DOCTYPE"), "{e}");
        let e = read_pnml(
            "<pnml>\n<net id=\"n\" type=\"http://www.pnml.org/version-2009/grammar/symmetricnet\">\
             <page id=\"g\"/></net></pnml>",
        )
        .unwrap_err();
        assert!(
            e.to_string().contains("symmetricnet") && e.to_string().contains("<net"),
            "{e}"
        );
        assert!(matches!(e, TmError::Format { line: Some(2), .. }));
    }

    #[test]
    fn malformed_named() {
        let e =
            read_pnml("<pnml><net id=\"n\"><page id=\"g\"><place id=\"p\"></page></net></pnml>")
                .unwrap_err();
        assert!(matches!(e, TmError::Format { .. }), "{e}");
        let e = read_pnml(
            "<pnml><net id=\"n\"><page id=\"g\"><place id=\"p\"/><arc id=\"a\" target=\"p\"/>\
             </page></net></pnml>",
        )
        .unwrap_err();
        assert!(
            e.to_string().contains("<arc>") && e.to_string().contains("source"),
            "{e}"
        );
        let e = read_pnml(
            "<pnml><net id=\"n\"><page id=\"g\"><place id=\"p\"><initialMarking><text>x</text>\
             </initialMarking></place></page></net></pnml>",
        )
        .unwrap_err();
        assert!(e.to_string().contains("initialMarking"), "{e}");
    }

    #[test]
    fn nested_pages_and_references() {
        let x = r#"<pnml><net id="n" type="http://www.pnml.org/version-2009/grammar/ptnet">
          <page id="g1"><place id="i"><initialMarking><text>1</text></initialMarking></place>
            <transition id="t"><name><text>Fix &amp; test</text></name></transition>
            <page id="g2"><referencePlace id="r" ref="o"/><place id="o"/>
              <arc id="a2" source="t" target="r"/></page>
            <arc id="a1" source="i" target="t"/></page></net></pnml>"#;
        let n = read_pnml(x).unwrap();
        assert_eq!(n.transitions[0].label.as_deref(), Some("Fix & test"));
        assert_eq!(n.arcs.len(), 2);
        assert_eq!(n.initial_marking, vec![1, 0]);
    }
}
