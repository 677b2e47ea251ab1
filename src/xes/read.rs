//! Streaming XES reader: XML events in, [`LogInput`] columns out, without a document tree.
//!
//! The reader makes one pass over the XML with `quick-xml`, keeping only the current element
//! stack, the attribute path and the columns being filled. Memory is the size of the result plus
//! a 64 KiB read buffer and the longest single tag, whatever the file size; gzip input is
//! decompressed as a stream.
//!
//! How each XES construct ends up (IEEE 1849-2016, section 5; 2023 revision accepted too):
//!
//! | construct | result |
//! |---|---|
//! | `log` XML attributes (`xes.version`, `xes.features`, `xmlns`, ...) | [`XesMeta`] |
//! | `extension` (`name`, `prefix`, `uri`) | [`XesMeta::extensions`] |
//! | `global` (`scope` trace/event, default values) | [`XesMeta::globals`] (not applied to elements) |
//! | `classifier` (`name`, space-separated `keys`, `'quoted keys'`) | [`XesMeta::classifiers`] |
//! | log-level attributes | [`XesMeta::attributes`] |
//! | `trace` | one case, in file order; traces without events are skipped and counted |
//! | trace `concept:name` | the case label (generated as `trace-<n>` if missing, by default) |
//! | other trace attributes | case attributes, one value per case ([`CaseAttrs::PerCase`]) |
//! | event `concept:name` / `time:timestamp` | activity / timestamp (both required) |
//! | event `org:resource` / `lifecycle:transition` | the resource / lifecycle columns |
//! | other event attributes | typed event columns with validity masks |
//! | unknown elements | skipped with their content, listed in [`XesReport::warnings`] |
//!
//! Attribute types map to columns as `string`, `id` → text (categorical), `int` → `i64`,
//! `float` → `f64`, `boolean` → bool, `date` → time (ns, UTC). A key met with two different
//! types, or with a value its type cannot parse, becomes a text column holding every value's
//! text (nothing is dropped) and is listed in [`XesReport::type_conflicts`].
//!
//! **Nested attributes are flattened into dotted keys.** XES lets any attribute carry
//! meta-attributes and has two composite types, `list` (ordered items, inside a `values`
//! element or directly inside the list) and the pre-IEEE `container` (keyed children). A
//! columnar log has no room for trees, so a child is stored under `parent.child`, a list item
//! under `parent.0`, `parent.1`, ... (its own key is not used), recursively:
//!
//! ```text
//! <float key="cost" value="3.5"><string key="currency" value="EUR"/></float>
//!     -> cost = 3.5, cost.currency = "EUR"
//! <list key="parts"><values><string key="p" value="chain"/><string key="p" value="tyre"/></values></list>
//!     -> parts.0 = "chain", parts.1 = "tyre"
//! ```
//!
//! Lists and containers have no value of their own; an empty one leaves no column. When a key
//! occurs twice in one element (or a flattened key collides with a literal one), the later
//! values go to `key#2`, `key#3`, ... and are counted in the report.
//!
//! Hostile input is refused early: a `<!DOCTYPE` (and hence any entity definition, internal
//! or external) is an error at its line, found by a prolog scan after its first nine bytes
//! (one after the root element, malformed anyway, is refused when the parser meets it), so
//! entity expansion ("billion laughs") and external fetches cannot happen. Only the five predefined XML entities
//! and character references are decoded. Malformed or truncated XML, truncated gzip and
//! non-UTF-8 bytes are [`TmError::Format`] errors with the 1-based line; lines are counted as
//! the parser consumes its buffer, never by rescanning. Shapes that would cost more than linear
//! work are bounded: element nesting (64 levels), attribute columns × rows
//! ([`XesReadOptions::max_attribute_cells`]) and the number of distinct warnings kept.
//!
//! References: IEEE Std 1849-2016, *IEEE Standard for eXtensible Event Stream (XES) for
//! Achieving Interoperability in Event Logs and Event Streams*, and its 2023 revision;
//! W3C *Extensible Markup Language (XML) 1.0*, sections 2.2 (characters), 3.3.3
//! (attribute-value normalisation) and 4.6 (predefined entities).

use std::borrow::Cow;
use std::cell::Cell;
use std::collections::HashSet;
use std::fs::File;
use std::io::{BufRead, BufReader, Read};
use std::path::Path;
use std::rc::Rc;

use flate2::bufread::MultiGzDecoder;
use quick_xml::events::{BytesStart, Event};
use quick_xml::Reader;

use super::columns::{parse_val, xes_value, ColBuilder, Columns, Interner, Val, Warnings};
use super::input::{
    attr_error, count_newlines, doctype_error, io_to_tm, key_value, skip_prolog, utf8, xml_attrs,
    RawCount, Source,
};
use super::time::parse_datetime_bytes;
use crate::control::Control;
use crate::error::{TmError, TmResult};
use crate::log::{BuildReport, CaseAttrs, EventLog, LogInput};

/// The XES key of the activity (event) and case label (trace).
pub const KEY_NAME: &str = "concept:name";
/// The XES key of the event timestamp.
pub const KEY_TIME: &str = "time:timestamp";
/// The XES key of the event resource; also the name of the resource column.
pub const KEY_RESOURCE: &str = "org:resource";
/// The XES key of the lifecycle transition; also the name of the lifecycle column.
pub const KEY_LIFECYCLE: &str = "lifecycle:transition";

/// XML events (tags, text runs) between two polls of the [`Control`] (cancel check and
/// progress): a few thousand log events.
const CHECK_EVERY: u64 = 1 << 15;
/// Size of the read buffer between the (decompressed) input and the XML parser.
const BUF_SIZE: usize = 1 << 16;

/// What to do with a trace that has no `concept:name`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum MissingCaseLabel {
    /// Label it `trace-<n>`, `n` being its 0-based position among all traces of the file, and
    /// count it in [`XesReport::n_generated_labels`] (default).
    #[default]
    Generate,
    /// Fail with a [`TmError::Format`] naming the line of the trace.
    Error,
}

/// Options of [`read_xes`].
#[derive(Debug, Clone)]
pub struct XesReadOptions {
    /// Traces without `concept:name`: default [`MissingCaseLabel::Generate`].
    pub missing_case_label: MissingCaseLabel,
    /// Budget for attribute columns, counted as distinct keys × rows (events for event
    /// attributes, cases for case attributes); default 2^30. A column holds a value or a null
    /// for every row, so a file whose keys are all different would otherwise need memory
    /// quadratic in its size; past the budget the reader stops with [`TmError::Limit`].
    pub max_attribute_cells: u64,
}

impl Default for XesReadOptions {
    fn default() -> Self {
        XesReadOptions {
            missing_case_label: MissingCaseLabel::Generate,
            max_attribute_cells: 1 << 30,
        }
    }
}

/// Deepest element nesting accepted (log, trace, event and 60 levels of nested attributes);
/// real files use a handful, and a bound keeps hostile nesting from costing quadratic time.
const MAX_DEPTH: usize = 64;

/// The XES attribute types (IEEE 1849-2016 six simple types and `list`; `container` from the
/// pre-IEEE format).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum XesType {
    /// `string` (xs:string).
    String,
    /// `date` (xs:dateTime).
    Date,
    /// `int` (xs:long).
    Int,
    /// `float` (xs:double).
    Float,
    /// `boolean` (xs:boolean).
    Boolean,
    /// `id` (a UUID as text).
    Id,
    /// `list` (ordered items).
    List,
    /// `container` (keyed children; pre-IEEE files).
    Container,
}

impl XesType {
    /// The element name of this type.
    pub fn tag(self) -> &'static str {
        match self {
            XesType::String => "string",
            XesType::Date => "date",
            XesType::Int => "int",
            XesType::Float => "float",
            XesType::Boolean => "boolean",
            XesType::Id => "id",
            XesType::List => "list",
            XesType::Container => "container",
        }
    }
    fn from_tag(tag: &[u8]) -> Option<XesType> {
        Some(match tag {
            b"string" => XesType::String,
            b"date" => XesType::Date,
            b"int" => XesType::Int,
            b"float" => XesType::Float,
            b"boolean" => XesType::Boolean,
            b"id" => XesType::Id,
            b"list" => XesType::List,
            b"container" => XesType::Container,
            _ => return None,
        })
    }
    fn is_composite(self) -> bool {
        matches!(self, XesType::List | XesType::Container)
    }
}

/// A typed value of a log-level or global attribute.
#[derive(Debug, Clone, PartialEq)]
pub enum XesValue {
    /// `string`.
    String(String),
    /// `id`.
    Id(String),
    /// `date`, as ns since the epoch, UTC.
    Date(i64),
    /// `int`.
    Int(i64),
    /// `float`.
    Float(f64),
    /// `boolean`.
    Boolean(bool),
}

/// An `extension` declaration.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct XesExtension {
    /// The extension name (e.g. `Concept`).
    pub name: String,
    /// The key prefix (e.g. `concept`).
    pub prefix: String,
    /// The URI of the extension definition.
    pub uri: String,
}

/// The scope of a `global` declaration.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum XesScope {
    /// Every trace carries the attribute.
    Trace,
    /// Every event carries the attribute.
    Event,
}

/// One attribute of a `global` declaration, with its default value.
#[derive(Debug, Clone, PartialEq)]
pub struct XesGlobal {
    /// Trace or event.
    pub scope: XesScope,
    /// The (flattened) attribute key.
    pub key: String,
    /// The default value.
    pub value: XesValue,
}

/// A `classifier`: the attribute keys that together name an event class.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct XesClassifier {
    /// The classifier name.
    pub name: String,
    /// The keys, in order (quoted keys unquoted).
    pub keys: Vec<String>,
    /// The optional `scope` attribute, verbatim.
    pub scope: Option<String>,
}

/// Log-level information of an XES file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct XesMeta {
    /// `xes.version` of the `log` element (e.g. `1.0`, `2.0`, `1849-2016`), if given.
    pub version: Option<String>,
    /// `xes.features`, split on whitespace (e.g. `nested-attributes`).
    pub features: Vec<String>,
    /// Every XML attribute of the `log` element, verbatim and in order.
    pub xml_attributes: Vec<(String, String)>,
    /// Extension declarations.
    pub extensions: Vec<XesExtension>,
    /// Global attribute declarations, flattened like other attributes.
    pub globals: Vec<XesGlobal>,
    /// Classifiers.
    pub classifiers: Vec<XesClassifier>,
    /// Log-level attributes, flattened, in file order.
    pub attributes: Vec<(String, XesValue)>,
}

/// What the reader noticed and how it dealt with it. Nothing is dropped without a count here.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct XesReport {
    /// `trace` elements in the file, with or without events.
    pub n_traces: u64,
    /// Events read.
    pub n_events: u64,
    /// Traces without events, skipped (the event log has no empty cases).
    pub n_empty_traces: u64,
    /// Traces that had no `concept:name` and got a generated label.
    pub n_generated_labels: u64,
    /// Cases whose label was already used by an earlier case (kept as separate cases).
    pub n_duplicate_labels: u64,
    /// Values stored under `key#2`, `key#3`, ... because their key repeated within an element.
    pub n_repeated_keys: u64,
    /// Keys turned into text columns, with the reason (two types, or an unparseable value).
    pub type_conflicts: Vec<String>,
    /// Unknown elements, text content and other oddities (name, first line, count).
    pub warnings: Vec<String>,
}

/// The result of [`read_xes`]: columns ready for [`EventLog::build`], plus log information.
#[derive(Debug, Clone)]
pub struct XesLog {
    /// Events in file order; row `i` is the `i`-th event of the file.
    pub input: LogInput,
    /// Log-level information.
    pub meta: XesMeta,
    /// What the reader noticed.
    pub report: XesReport,
}

// ---------------------------------------------------------------------------------------------
// The parser state machine.

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Ctx {
    Log,
    Trace,
    Event,
    Global,
    /// A simple attribute with meta-attributes.
    Simple,
    List,
    Container,
    Values,
    /// `extension` or `classifier` written with an end tag.
    Leaf,
    /// An unknown element: everything inside is skipped.
    Skip,
}

#[derive(Debug, Clone, Copy)]
struct Frame {
    ctx: Ctx,
    /// Length of the attribute path to restore when the element closes.
    restore: usize,
    /// Next list-item index (lists and their `values`).
    items: u32,
    line: u64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Owner {
    Log,
    Global(XesScope),
    Trace,
    Event,
}

#[derive(Debug, Default)]
struct TraceState {
    line: u64,
    label: Option<String>,
    case: Option<u32>,
    n_events: u64,
    /// Trace attributes, applied when the trace turns out to have events.
    pending: Vec<(usize, XesType, Vec<u8>, u64)>,
}

#[derive(Debug, Default)]
struct EventState {
    line: u64,
    activity: Option<u32>,
    time: Option<i64>,
}

struct Parser<'o> {
    opts: &'o XesReadOptions,
    stack: Vec<Frame>,
    owner: Owner,
    path: Vec<u8>,
    seen_log: bool,
    log_closed: bool,

    meta: XesMeta,
    report: XesReport,
    warn: Warnings,

    trace: TraceState,
    event: EventState,
    n_traces_in_file: u64,

    case: Vec<u32>,
    case_names: Vec<String>,
    activities: Interner,
    activity: Vec<u32>,
    time: Vec<i64>,
    resource: ColBuilder,
    lifecycle: ColBuilder,
    event_cols: Columns,
    case_cols: Columns,
}

/// Split classifier keys on whitespace; `'...'` quotes a key that contains spaces.
fn split_keys(s: &str, line: u64) -> TmResult<Vec<String>> {
    let mut keys = Vec::new();
    let mut rest = s.trim_start();
    while !rest.is_empty() {
        if let Some(q) = rest.strip_prefix('\'') {
            let end = q.find('\'').ok_or_else(|| {
                attr_error(
                    line,
                    format_args!("classifier keys \"{s}\": a quote is not closed"),
                )
            })?;
            keys.push(q[..end].to_owned());
            rest = q[end + 1..].trim_start();
        } else {
            let end = rest.find(char::is_whitespace).unwrap_or(rest.len());
            keys.push(rest[..end].to_owned());
            rest = rest[end..].trim_start();
        }
    }
    Ok(keys)
}

fn ctx_name(c: Ctx) -> &'static str {
    match c {
        Ctx::Log => "log",
        Ctx::Trace => "trace",
        Ctx::Event => "event",
        Ctx::Global => "global",
        Ctx::Simple => "attribute",
        Ctx::List => "list",
        Ctx::Container => "container",
        Ctx::Values => "values",
        Ctx::Leaf => "extension/classifier",
        Ctx::Skip => "unknown element",
    }
}

impl<'o> Parser<'o> {
    fn new(opts: &'o XesReadOptions) -> Self {
        Parser {
            opts,
            stack: Vec::with_capacity(16),
            owner: Owner::Log,
            path: Vec::with_capacity(64),
            seen_log: false,
            log_closed: false,
            meta: XesMeta::default(),
            report: XesReport::default(),
            warn: Warnings::default(),
            trace: TraceState::default(),
            event: EventState::default(),
            n_traces_in_file: 0,
            case: Vec::new(),
            case_names: Vec::new(),
            activities: Interner::default(),
            activity: Vec::new(),
            time: Vec::new(),
            resource: ColBuilder::new(KEY_RESOURCE.into(), true),
            lifecycle: ColBuilder::new(KEY_LIFECYCLE.into(), true),
            event_cols: Columns::new(opts.max_attribute_cells, "event"),
            case_cols: Columns::new(opts.max_attribute_cells, "case"),
        }
    }

    fn push(&mut self, ctx: Ctx, empty: bool, restore: usize, line: u64) {
        if empty {
            self.path.truncate(restore);
        } else {
            self.stack.push(Frame {
                ctx,
                restore,
                items: 0,
                line,
            });
        }
    }

    fn unexpected(&self, name: &[u8], inside: Ctx, line: u64) -> TmError {
        attr_error(
            line,
            format_args!(
                "<{}> is not allowed inside <{}>",
                String::from_utf8_lossy(name),
                ctx_name(inside)
            ),
        )
    }

    fn skip_unknown(&mut self, name: &[u8], inside: Ctx, empty: bool, line: u64) {
        self.warn.note(
            format!(
                "unknown element <{}> inside <{}> ignored with its content",
                String::from_utf8_lossy(name),
                ctx_name(inside)
            ),
            line,
        );
        let restore = self.path.len();
        self.push(Ctx::Skip, empty, restore, line);
    }

    fn open(&mut self, e: &BytesStart<'_>, empty: bool, line: u64) -> TmResult<()> {
        let local = e.local_name();
        let name = local.as_ref();
        if !empty && self.stack.len() >= MAX_DEPTH {
            return Err(attr_error(
                line,
                format_args!(
                    "elements nested more than {MAX_DEPTH} deep; XES attributes do not nest that far"
                ),
            ));
        }
        let Some(top) = self.stack.last().map(|f| f.ctx) else {
            return self.open_root(e, name, empty, line);
        };
        if top == Ctx::Skip {
            let restore = self.path.len();
            self.push(Ctx::Skip, empty, restore, line);
            return Ok(());
        }
        if let Some(ty) = XesType::from_tag(name) {
            return match top {
                Ctx::Log
                | Ctx::Trace
                | Ctx::Event
                | Ctx::Global
                | Ctx::Simple
                | Ctx::List
                | Ctx::Container
                | Ctx::Values => self.open_attr(e, ty, top, empty, line),
                Ctx::Leaf | Ctx::Skip => {
                    self.skip_unknown(name, top, empty, line);
                    Ok(())
                }
            };
        }
        match (top, name) {
            (Ctx::Log, b"trace") => self.open_trace(empty, line),
            (Ctx::Trace, b"event") => self.open_event(empty, line),
            (Ctx::Log, b"extension") => {
                let mut x = XesExtension::default();
                for (k, v) in xml_attrs(e, line)? {
                    match k.as_str() {
                        "name" => x.name = v,
                        "prefix" => x.prefix = v,
                        "uri" => x.uri = v,
                        _ => {}
                    }
                }
                self.meta.extensions.push(x);
                let restore = self.path.len();
                self.push(Ctx::Leaf, empty, restore, line);
                Ok(())
            }
            (Ctx::Log, b"classifier") => {
                let mut c = XesClassifier::default();
                for (k, v) in xml_attrs(e, line)? {
                    match k.as_str() {
                        "name" => c.name = v,
                        "keys" => c.keys = split_keys(&v, line)?,
                        "scope" => c.scope = Some(v),
                        _ => {}
                    }
                }
                self.meta.classifiers.push(c);
                let restore = self.path.len();
                self.push(Ctx::Leaf, empty, restore, line);
                Ok(())
            }
            (Ctx::Log, b"global") => {
                let mut scope = XesScope::Event; // the XES default scope
                for (k, v) in xml_attrs(e, line)? {
                    if k == "scope" {
                        scope = match v.as_str() {
                            "event" => XesScope::Event,
                            "trace" => XesScope::Trace,
                            other => {
                                return Err(attr_error(
                                    line,
                                    format_args!(
                                        "<global scope=\"{other}\">: expected scope \"trace\" or \"event\""
                                    ),
                                ))
                            }
                        };
                    }
                }
                if !empty {
                    self.owner = Owner::Global(scope);
                }
                self.push(Ctx::Global, empty, 0, line);
                Ok(())
            }
            (Ctx::Values, _) | (Ctx::List, b"values") => {
                if top == Ctx::Values {
                    self.skip_unknown(name, top, empty, line);
                } else {
                    let items = self.stack.last().map_or(0, |f| f.items);
                    let restore = self.path.len();
                    self.push(Ctx::Values, empty, restore, line);
                    if let Some(f) = self.stack.last_mut().filter(|_| !empty) {
                        f.items = items;
                    }
                }
                Ok(())
            }
            (
                _,
                b"log" | b"trace" | b"event" | b"global" | b"extension" | b"classifier" | b"values",
            ) => Err(self.unexpected(name, top, line)),
            _ => {
                self.skip_unknown(name, top, empty, line);
                Ok(())
            }
        }
    }

    fn open_root(
        &mut self,
        e: &BytesStart<'_>,
        name: &[u8],
        empty: bool,
        line: u64,
    ) -> TmResult<()> {
        if self.log_closed {
            return Err(attr_error(
                line,
                format_args!(
                    "<{}> after the end of <log>; an XES file has one <log> element",
                    String::from_utf8_lossy(name)
                ),
            ));
        }
        if name != b"log" {
            return Err(attr_error(
                line,
                format_args!(
                    "the root element is <{}>, expected <log> (is this an XES file?)",
                    String::from_utf8_lossy(name)
                ),
            ));
        }
        self.seen_log = true;
        let attrs = xml_attrs(e, line)?;
        for (k, v) in &attrs {
            match k.as_str() {
                "xes.version" => self.meta.version = Some(v.clone()),
                "xes.features" => {
                    self.meta.features = v.split_whitespace().map(str::to_owned).collect();
                }
                _ => {}
            }
        }
        self.meta.xml_attributes = attrs;
        if empty {
            self.log_closed = true;
        } else {
            self.push(Ctx::Log, false, 0, line);
        }
        Ok(())
    }

    fn open_trace(&mut self, empty: bool, line: u64) -> TmResult<()> {
        self.report.n_traces += 1;
        self.trace.line = line;
        self.trace.label = None;
        self.trace.case = None;
        self.trace.n_events = 0;
        self.trace.pending.clear();
        self.n_traces_in_file += 1;
        if empty {
            self.close_trace()
        } else {
            self.owner = Owner::Trace;
            self.push(Ctx::Trace, false, 0, line);
            Ok(())
        }
    }

    fn open_event(&mut self, empty: bool, line: u64) -> TmResult<()> {
        if self.trace.case.is_none() {
            let c = u32::try_from(self.case_names.len()).map_err(|_| TmError::Limit {
                message: "more than 2^32 traces".into(),
            })?;
            self.trace.case = Some(c);
        }
        self.event = EventState {
            line,
            activity: None,
            time: None,
        };
        if empty {
            self.close_event()
        } else {
            self.owner = Owner::Event;
            self.push(Ctx::Event, false, 0, line);
            Ok(())
        }
    }

    fn open_attr(
        &mut self,
        e: &BytesStart<'_>,
        ty: XesType,
        parent: Ctx,
        empty: bool,
        line: u64,
    ) -> TmResult<()> {
        let (key, value) = key_value(e, line)?;
        let nested = matches!(
            parent,
            Ctx::Simple | Ctx::List | Ctx::Container | Ctx::Values
        );
        let restore = if nested { self.path.len() } else { 0 };
        let missing_key =
            || attr_error(line, format_args!("<{}> has no 'key' attribute", ty.tag()));
        if nested {
            self.path.push(b'.');
            if matches!(parent, Ctx::List | Ctx::Values) {
                let f = self.stack.last_mut().ok_or_else(missing_key)?;
                let idx = f.items;
                f.items += 1;
                self.path.extend_from_slice(idx.to_string().as_bytes());
            } else {
                self.path
                    .extend_from_slice(key.as_deref().ok_or_else(missing_key)?);
            }
        } else if !empty || ty.is_composite() {
            self.path.clear();
            self.path
                .extend_from_slice(key.as_deref().ok_or_else(missing_key)?);
        }
        if !ty.is_composite() {
            let value = value.ok_or_else(|| {
                attr_error(
                    line,
                    format_args!(
                        "<{} key=\"{}\"> has no 'value' attribute",
                        ty.tag(),
                        String::from_utf8_lossy(key.as_deref().unwrap_or(b"?"))
                    ),
                )
            })?;
            if nested || !empty {
                let path = std::mem::take(&mut self.path);
                let r = self.deliver(&path, ty, &value, line);
                self.path = path;
                r?;
            } else {
                let key = key.ok_or_else(missing_key)?;
                self.deliver(&key, ty, &value, line)?;
            }
        }
        let ctx = match ty {
            XesType::List => Ctx::List,
            XesType::Container => Ctx::Container,
            _ => Ctx::Simple,
        };
        if empty {
            self.path.truncate(restore);
        } else {
            self.push(ctx, false, restore, line);
        }
        Ok(())
    }

    /// Store one attribute value of the current owner.
    fn deliver(&mut self, key: &[u8], ty: XesType, raw: &[u8], line: u64) -> TmResult<()> {
        match self.owner {
            Owner::Event => self.deliver_event(key, ty, raw, line),
            Owner::Trace => {
                if key == KEY_NAME.as_bytes() && self.trace.label.is_none() {
                    self.trace.label = Some(utf8(raw, line, "the trace concept:name")?.to_owned());
                } else {
                    let key = if key == KEY_NAME.as_bytes() {
                        // A second concept:name in the trace: keep it as a case attribute.
                        Cow::Owned(b"concept:name#2".to_vec())
                    } else {
                        Cow::Borrowed(key)
                    };
                    let col = self.case_cols.get(&key, self.case_names.len(), line)?;
                    self.trace.pending.push((col, ty, raw.to_vec(), line));
                }
                Ok(())
            }
            Owner::Log => {
                let v = xes_value(ty, raw, line, &mut self.warn)?;
                let k = utf8(key, line, "an attribute key")?.to_owned();
                self.meta.attributes.push((k, v));
                Ok(())
            }
            Owner::Global(scope) => {
                let value = xes_value(ty, raw, line, &mut self.warn)?;
                let key = utf8(key, line, "an attribute key")?.to_owned();
                self.meta.globals.push(XesGlobal { scope, key, value });
                Ok(())
            }
        }
    }

    fn deliver_event(&mut self, key: &[u8], ty: XesType, raw: &[u8], line: u64) -> TmResult<()> {
        let row = self.activity.len();
        let mut suffix = 0;
        match key {
            b"concept:name" => {
                if self.event.activity.is_none() {
                    self.event.activity =
                        Some(self.activities.code(raw, line, "the event concept:name")?);
                    return Ok(());
                }
                suffix = 2;
            }
            b"time:timestamp" => {
                if self.event.time.is_none() {
                    let t = parse_datetime_bytes(raw).map_err(|why| TmError::Timestamp {
                        column: Some(KEY_TIME.into()),
                        row: Some(row as u64),
                        line: Some(line),
                        message: format!(
                            "line {line}: time:timestamp '{}' of event {row} is not an \
                             xs:dateTime ({why}); expected e.g. 2016-02-29T13:45:00.123+01:00",
                            String::from_utf8_lossy(raw)
                        ),
                    })?;
                    self.event.time = Some(t);
                    return Ok(());
                }
                suffix = 2;
            }
            b"org:resource" | b"lifecycle:transition" => {
                let col = if key == b"org:resource" {
                    &mut self.resource
                } else {
                    &mut self.lifecycle
                };
                if col.len() <= row {
                    let what = if key == b"org:resource" {
                        "the resource column"
                    } else {
                        "the lifecycle column"
                    };
                    return col.set(
                        row,
                        Val::Text(raw),
                        ty,
                        line,
                        what,
                        &mut self.report.type_conflicts,
                    );
                }
                suffix = 2;
            }
            _ => {}
        }
        let i =
            self.event_cols
                .free_slot(key, row, line, suffix, &mut self.report, &mut self.warn)?;
        let v = parse_val(ty, raw);
        self.event_cols.cols[i].set(
            row,
            v,
            ty,
            line,
            "event attribute",
            &mut self.report.type_conflicts,
        )
    }

    /// Character data: XES has none, so it is reported (unless inside an ignored element).
    fn text(&mut self, line: u64) {
        if self.stack.last().is_some_and(|f| f.ctx != Ctx::Skip) {
            self.warn.note(
                "text content ignored (XES keeps values in attributes)".into(),
                line,
            );
        }
    }

    fn close(&mut self, line: u64) -> TmResult<()> {
        let Some(f) = self.stack.pop() else {
            return Err(attr_error(line, "an end tag without a matching start tag"));
        };
        self.path.truncate(f.restore);
        match f.ctx {
            Ctx::Log => {
                self.log_closed = true;
                Ok(())
            }
            Ctx::Trace => self.close_trace(),
            Ctx::Event => self.close_event(),
            Ctx::Global => {
                self.owner = Owner::Log;
                Ok(())
            }
            Ctx::Values => {
                if let Some(p) = self.stack.last_mut() {
                    p.items = f.items;
                }
                Ok(())
            }
            Ctx::Simple | Ctx::List | Ctx::Container | Ctx::Leaf | Ctx::Skip => Ok(()),
        }
    }

    fn close_event(&mut self) -> TmResult<()> {
        let line = self.event.line;
        let row = self.activity.len();
        let Some(activity) = self.event.activity else {
            return Err(attr_error(
                line,
                format_args!(
                    "the event starting here (event {row} of the file, in the trace starting on \
                     line {}) has no concept:name; an event needs an activity name",
                    self.trace.line
                ),
            ));
        };
        let Some(time) = self.event.time else {
            return Err(TmError::Timestamp {
                column: Some(KEY_TIME.into()),
                row: Some(row as u64),
                line: Some(line),
                message: format!(
                    "line {line}: the event starting here (event {row} of the file) has no \
                     time:timestamp; every event needs a date attribute 'time:timestamp'"
                ),
            });
        };
        self.activity.push(activity);
        self.time.push(time);
        // The case code was assigned when the event opened.
        self.case.push(self.trace.case.unwrap_or(0));
        self.trace.n_events += 1;
        self.owner = Owner::Trace;
        Ok(())
    }

    fn close_trace(&mut self) -> TmResult<()> {
        self.owner = Owner::Log;
        let index = self.n_traces_in_file - 1;
        let Some(case) = self.trace.case else {
            self.report.n_empty_traces += 1;
            return Ok(());
        };
        let label = match self.trace.label.take() {
            Some(l) => l,
            None => match self.opts.missing_case_label {
                MissingCaseLabel::Generate => {
                    self.report.n_generated_labels += 1;
                    format!("trace-{index}")
                }
                MissingCaseLabel::Error => {
                    let line = self.trace.line;
                    return Err(attr_error(
                        line,
                        "the trace starting here has no concept:name (case label); \
                         set missing_case_label to Generate to label it 'trace-<n>'",
                    ));
                }
            },
        };
        self.case_names.push(label);
        let row = case as usize;
        let pending = std::mem::take(&mut self.trace.pending);
        for (col, ty, raw, line) in &pending {
            let col = if self.case_cols.cols[*col].len() > row {
                let key = self.case_cols.cols[*col].name.clone();
                self.case_cols.free_slot(
                    key.as_bytes(),
                    row,
                    *line,
                    2,
                    &mut self.report,
                    &mut self.warn,
                )?
            } else {
                *col
            };
            self.case_cols.cols[col].set(
                row,
                parse_val(*ty, raw),
                *ty,
                *line,
                "case attribute",
                &mut self.report.type_conflicts,
            )?;
        }
        self.trace.pending = pending;
        self.trace.pending.clear();
        Ok(())
    }

    fn finish(mut self, line: u64) -> TmResult<XesLog> {
        if let Some(f) = self.stack.last() {
            return Err(attr_error(
                line,
                format_args!(
                    "the input ended inside <{}> opened on line {} (truncated file?)",
                    ctx_name(f.ctx),
                    f.line
                ),
            ));
        }
        if !self.seen_log {
            return Err(attr_error(line, "no <log> element found"));
        }
        let n = self.activity.len();
        let n_cases = self.case_names.len();
        {
            let mut seen: HashSet<&str> = HashSet::with_capacity(n_cases);
            for s in &self.case_names {
                if !seen.insert(s.as_str()) {
                    self.report.n_duplicate_labels += 1;
                }
            }
        }
        self.report.n_events = n as u64;
        self.report.warnings = std::mem::take(&mut self.warn).finish();
        if self.report.n_duplicate_labels > 0 {
            self.report.warnings.push(format!(
                "{} traces reuse the concept:name of an earlier trace; they are kept as \
                 separate cases with the same label",
                self.report.n_duplicate_labels
            ));
        }
        let resource = self.resource.finish(n);
        let lifecycle = self.lifecycle.finish(n);
        self.event_cols
            .check_budget(self.event_cols.cols.len(), n)?;
        self.case_cols
            .check_budget(self.case_cols.cols.len(), n_cases)?;
        let event_attrs = self.event_cols.finish(n);
        let case_cols = self.case_cols.finish(n_cases);
        let input = LogInput {
            case: self.case,
            case_names: self.case_names,
            activity: self.activity,
            activity_names: self.activities.names,
            time: self.time,
            resource,
            lifecycle,
            event_attrs,
            case_attrs: if case_cols.is_empty() {
                CaseAttrs::None
            } else {
                CaseAttrs::PerCase(case_cols)
            },
            row: None,
        };
        Ok(XesLog {
            input,
            meta: self.meta,
            report: self.report,
        })
    }
}

fn xml_error(e: &quick_xml::Error, src: &Source<'_>, line: u64) -> TmError {
    match e {
        quick_xml::Error::Io(io) => io_to_tm(io, src.gzip, src.line()),
        quick_xml::Error::Syntax(s) => {
            attr_error(line, format_args!("malformed or truncated XML: {s}"))
        }
        other => attr_error(line, format_args!("malformed XML: {other}")),
    }
}

// ---------------------------------------------------------------------------------------------
// Entry points.

fn read_impl<R: BufRead>(
    mut r: R,
    opts: &XesReadOptions,
    ctl: &Control,
    consumed: Rc<Cell<u64>>,
) -> TmResult<XesLog> {
    let head = r.fill_buf().map_err(|e| TmError::Io {
        message: format!("reading XES: {e}"),
    })?;
    let gzip = head.starts_with(&[0x1f, 0x8b]);
    let raw = RawCount {
        inner: r,
        consumed: Rc::clone(&consumed),
    };
    let inner: Box<dyn Read + '_> = if gzip {
        Box::new(MultiGzDecoder::new(raw))
    } else {
        Box::new(raw)
    };
    let mut src = Source {
        inner,
        buf: vec![0u8; BUF_SIZE].into_boxed_slice(),
        pos: 0,
        cap: 0,
        newlines: 0,
        gzip,
    };
    skip_prolog(&mut src)?;
    let mut xml = Reader::from_reader(src);
    {
        let c = xml.config_mut();
        // Whitespace-only text between tags is skipped inside the parser (a fifth faster on
        // indented files); the line of an event is then the line after it minus its newlines.
        c.trim_text_start = true;
        c.trim_text_end = false;
        c.check_end_names = true;
        c.expand_empty_elements = false;
        c.allow_unmatched_ends = false;
    }
    let mut p = Parser::new(opts);
    let mut buf: Vec<u8> = Vec::with_capacity(4096);
    let mut n_xml_events = 0u64;
    let mut next_check = CHECK_EVERY;
    let mut reported = 0u64;
    loop {
        buf.clear();
        let ev = match xml.read_event_into(&mut buf) {
            Ok(ev) => ev,
            // Where the parser stopped: for a truncated tag, the end of the input.
            Err(e) => return Err(xml_error(&e, xml.get_ref(), xml.get_ref().line())),
        };
        let after = xml.get_ref().line();
        let line = |b: &[u8]| after - count_newlines(b);
        match ev {
            Event::Start(e) => p.open(&e, false, line(&e))?,
            Event::Empty(e) => p.open(&e, true, line(&e))?,
            Event::End(e) => p.close(line(&e))?,
            Event::Text(t) => {
                if !t.iter().all(u8::is_ascii_whitespace) {
                    p.text(line(&t));
                }
            }
            Event::CData(t) => p.text(line(&t)),
            Event::GeneralRef(_) => p.text(after),
            Event::DocType(t) => return Err(doctype_error(line(&t))),
            Event::Comment(_) | Event::Decl(_) | Event::PI(_) => {}
            Event::Eof => break,
        }
        n_xml_events += 1;
        if n_xml_events >= next_check {
            next_check += CHECK_EVERY;
            ctl.check()?;
            let now = consumed.get();
            ctl.advance(now - reported);
            reported = now;
        }
    }
    let line = xml.get_ref().line();
    let out = p.finish(line)?;
    ctl.advance(consumed.get() - reported);
    Ok(out)
}

/// Read an XES document (plain or gzip, detected by the magic bytes `1f 8b`) from a stream.
///
/// Events come out in file order. Progress is reported through `ctl` in input bytes consumed
/// (compressed bytes for gzip); cancellation is checked every few thousand events.
///
/// # Errors
/// [`TmError::Format`] (with the line) for malformed, truncated or hostile XML, truncated gzip
/// or non-UTF-8 text; [`TmError::Timestamp`] for an event without a valid `time:timestamp`;
/// [`TmError::Io`] for read failures; [`TmError::Interrupted`] when cancelled.
pub fn read_xes<R: BufRead>(r: R, opts: &XesReadOptions, ctl: &Control) -> TmResult<XesLog> {
    read_impl(r, opts, ctl, Rc::new(Cell::new(0)))
}

/// Read an XES file (`.xes` or gzip-compressed `.xes.gz`) with default options.
///
/// The file size is set as the total of `ctl`'s progress.
///
/// # Errors
/// As [`read_xes`]; [`TmError::Io`] naming the path if it cannot be opened.
pub fn read_xes_path_with(
    path: impl AsRef<Path>,
    opts: &XesReadOptions,
    ctl: &Control,
) -> TmResult<XesLog> {
    let path = path.as_ref();
    let f = File::open(path).map_err(|e| TmError::Io {
        message: format!("cannot open XES file '{}': {e}", path.display()),
    })?;
    if let Ok(m) = f.metadata() {
        ctl.set_total(m.len());
    }
    // Name the file in read errors too (a directory opens, and fails on the first read).
    read_xes(BufReader::with_capacity(BUF_SIZE, f), opts, ctl).map_err(|e| match e {
        TmError::Io { message } => TmError::Io {
            message: format!("XES file '{}': {message}", path.display()),
        },
        e => e,
    })
}

/// Read an XES file (`.xes` or `.xes.gz`, detected by content) with default options.
///
/// # Errors
/// As [`read_xes_path_with`].
pub fn read_xes_path(path: impl AsRef<Path>) -> TmResult<XesLog> {
    read_xes_path_with(path, &XesReadOptions::default(), &Control::new())
}

/// Read an XES document held in memory (plain or gzip) with default options.
///
/// # Errors
/// As [`read_xes`].
pub fn read_xes_bytes(bytes: &[u8]) -> TmResult<XesLog> {
    read_xes(bytes, &XesReadOptions::default(), &Control::new())
}

/// Read an XES stream and build the [`EventLog`] at once.
///
/// # Errors
/// As [`read_xes`], plus the errors of [`EventLog::build`] (e.g. a file without events).
pub fn read_xes_log<R: BufRead>(
    r: R,
    opts: &XesReadOptions,
    ctl: &Control,
) -> TmResult<(EventLog, XesMeta, XesReport, BuildReport)> {
    let x = read_xes(r, opts, ctl)?;
    let (log, build) = EventLog::build(x.input)?;
    Ok((log, x.meta, x.report, build))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::log::{Column, Values};
    use crate::xes::time::format_ns_into;
    use std::io::Write;
    use std::time::Instant;

    // Timestamps below were computed with Python's `datetime` (a general-purpose reference
    // library): `(datetime.fromisoformat(s) - epoch) // timedelta(microseconds=1) * 1000`,
    // plus the sub-microsecond digits where a value has them.
    const T_0900_CET: i64 = 1_709_539_200_000_000_000; // 2024-03-04T09:00:00+01:00
    const T_0930_CET: i64 = 1_709_541_000_250_000_000; // 2024-03-04T09:30:00.25+01:00
    const T_1005_CET: i64 = 1_709_543_100_000_000_000; // 2024-03-04T10:05:00+01:00
    const T_1100_Z: i64 = 1_709_550_000_000_000_000; // 2024-03-04T11:00:00Z
    const T_1215_Z: i64 = 1_709_554_500_123_456_789; // 2024-03-04T12:15:00.123456789Z
    const T_PROMISED: i64 = 1_709_658_000_000_000_000; // 2024-03-05T17:00:00Z
    const T_2011: i64 = 1_304_668_800_000_000_000; // 2011-05-06T10:00:00+02:00

    const WORKSHOP: &str = include_str!("../../tests/data/xes/workshop_2016.xes");
    const PRE_IEEE: &str = include_str!("../../tests/data/xes/pre_ieee_container.xes");
    const LAUGHS: &str = include_str!("../../tests/data/xes/billion_laughs_refused.xes");

    fn read(doc: &str) -> TmResult<XesLog> {
        read_xes_bytes(doc.as_bytes())
    }

    fn col<'a>(cols: &'a [Column], name: &str) -> &'a Column {
        cols.iter().find(|c| c.name == name).unwrap_or_else(|| {
            panic!(
                "no column {name}: {:?}",
                cols.iter().map(|c| &c.name).collect::<Vec<_>>()
            )
        })
    }

    /// Cell texts with `None` for nulls.
    fn texts(c: &Column) -> Vec<Option<String>> {
        (0..c.len())
            .map(|i| c.is_valid(i).then(|| c.values.text(i)))
            .collect()
    }

    fn case_cols(x: &XesLog) -> &[Column] {
        match &x.input.case_attrs {
            CaseAttrs::PerCase(c) => c,
            other => panic!("expected per-case attributes, got {other:?}"),
        }
    }

    fn gzip(b: &[u8]) -> Vec<u8> {
        let mut e = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
        e.write_all(b).unwrap();
        e.finish().unwrap()
    }

    fn ev(body: &str) -> String {
        format!(
            "<?xml version=\"1.0\"?>\n<log xes.version=\"1849-2016\">\n<trace>\n\
             <string key=\"concept:name\" value=\"c\"/>\n<event>\n{body}\n</event>\n</trace>\n</log>\n"
        )
    }

    fn format_line(r: TmResult<XesLog>) -> (u64, String) {
        match r {
            Err(TmError::Format {
                line: Some(l),
                message,
            }) => (l, message),
            other => panic!("expected a Format error with a line, got {other:?}"),
        }
    }

    // IEEE 1849-2016: log, extension, global, classifier, trace and event elements, the six
    // simple attribute types, a meta-attribute and a list (section 5 of the standard).
    #[test]
    fn ieee_1849_2016_every_construct() {
        let x = read(WORKSHOP).unwrap();
        let m = &x.meta;
        assert_eq!(m.version.as_deref(), Some("1849-2016"));
        assert_eq!(m.features, ["nested-attributes"]);
        assert_eq!(m.extensions.len(), 5);
        assert_eq!(
            m.extensions[3],
            XesExtension {
                name: "Organizational".into(),
                prefix: "org".into(),
                uri: "http://www.xes-standard.org/org.xesext".into()
            }
        );
        assert_eq!(m.globals.len(), 4);
        assert_eq!(m.globals[0].scope, XesScope::Trace);
        assert_eq!(
            m.globals[2],
            XesGlobal {
                scope: XesScope::Event,
                key: "time:timestamp".into(),
                value: XesValue::Date(0)
            }
        );
        assert_eq!(
            m.classifiers[1].keys,
            ["concept:name", "lifecycle:transition"]
        );
        assert_eq!(m.classifiers[2].keys, ["bike model", "concept:name"]);
        assert_eq!(
            m.attributes,
            vec![
                (
                    "concept:name".into(),
                    XesValue::String("workshop March".into())
                ),
                (
                    "lifecycle:model".into(),
                    XesValue::String("standard".into())
                ),
            ]
        );

        let r = &x.report;
        assert_eq!((r.n_traces, r.n_events, r.n_empty_traces), (3, 5, 1));
        assert_eq!(r.n_generated_labels, 0);
        assert!(
            r.type_conflicts.is_empty() && r.warnings.is_empty(),
            "{r:?}"
        );

        let inp = &x.input;
        assert_eq!(inp.case_names, ["repair-001", "repair-002"]);
        assert_eq!(inp.case, [0, 0, 0, 1, 1]);
        assert_eq!(
            inp.activity_names,
            ["register bike", "replace chain", "true wheel"]
        );
        assert_eq!(inp.activity, [0, 1, 1, 0, 2]);
        assert_eq!(
            inp.time,
            [T_0900_CET, T_0930_CET, T_1005_CET, T_1100_Z, T_1215_Z]
        );
        let res = inp.resource.as_ref().unwrap();
        assert_eq!(res.name, KEY_RESOURCE);
        let s = |v: &str| Some(v.to_string());
        assert_eq!(texts(res), [s("Ana"), s("Bo"), s("Bo"), s("Ana"), None]);
        let lc = inp.lifecycle.as_ref().unwrap();
        assert_eq!(
            texts(lc),
            [
                s("complete"),
                s("start"),
                s("complete"),
                s("complete"),
                s("complete")
            ]
        );
        assert!(lc.valid.is_none());

        let ea = &inp.event_attrs;
        let q = col(ea, "queue length");
        assert!(matches!(q.values, Values::I64(_)));
        assert_eq!(texts(q), [s("3"), None, None, s("-1"), None]);
        let cost = col(ea, "cost:total");
        assert_eq!(cost.values, Values::F64(vec![0.0, 19.99, 0.0, 0.0, 15.0]));
        assert_eq!(cost.valid, Some(vec![false, true, false, false, true]));
        assert_eq!(
            texts(col(ea, "parts.0")),
            [None, s("chain"), None, None, None]
        );
        assert_eq!(
            texts(col(ea, "parts.1")),
            [None, s("master link"), None, None, None]
        );
        let ride = col(ea, "test ride");
        assert!(matches!(ride.values, Values::Bool(_)));
        assert_eq!(texts(ride), [None, None, s("false"), None, None]);
        let promised = col(ea, "promised");
        assert!(matches!(&promised.values, Values::Time(v) if v[2] == T_PROMISED));
        // A character reference survives attribute-value normalisation (XML 1.0, 3.3.3).
        assert_eq!(texts(col(ea, "note"))[4], s("spoke\ttension <ok>"));
        assert_eq!(ea.len(), 7);

        let ca = case_cols(&x);
        assert_eq!(
            texts(col(ca, "bike model")),
            [s("city & trekking"), s("cargo")]
        );
        assert_eq!(texts(col(ca, "frame size")), [s("56"), None]);
        assert_eq!(col(ca, "warranty").values, Values::Bool(vec![true, false]));
        assert_eq!(texts(col(ca, "cost:total")), [s("49.5"), None]);
        assert_eq!(texts(col(ca, "cost:total.cost:currency")), [s("EUR"), None]);
        assert_eq!(
            texts(col(ca, "identity:id")),
            [s("8f2b1c7e-0d4a-4c55-9a7b-2e6f3d1a9b10"), None]
        );
        assert_eq!(ca.len(), 6);

        let (log, _, _, b) = read_xes_log(
            WORKSHOP.as_bytes(),
            &XesReadOptions::default(),
            &Control::new(),
        )
        .unwrap();
        assert_eq!((log.n_cases(), log.n_events(), b.n_reordered), (2, 5, 0));
    }

    // Pre-IEEE XES 1.0 files: `container` attributes and list items directly in the list.
    #[test]
    fn pre_ieee_container_and_direct_list_items() {
        let x = read(PRE_IEEE).unwrap();
        assert_eq!(x.meta.version.as_deref(), Some("1.0"));
        assert_eq!(x.input.time, [T_2011]);
        let ca = case_cols(&x);
        let names: Vec<&str> = ca.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(
            names,
            ["customer.name", "customer.visits", "customer.address.city"]
        );
        assert_eq!(col(ca, "customer.visits").values, Values::I64(vec![4]));
        let ea = &x.input.event_attrs;
        let names: Vec<&str> = ea.iter().map(|c| c.name.as_str()).collect();
        assert_eq!(names, ["tools.0", "tools.1", "outcome", "outcome.checked"]);
        assert_eq!(col(ea, "outcome.checked").values, Values::Bool(vec![true]));
        assert_eq!(x.input.activity_names, ["adjust brakes"]);
    }

    // IEEE 1849-2023 fixed the position of log attributes in the schema; the reader accepts
    // log-level elements in any order, and nested lists inside lists.
    #[test]
    fn ieee_1849_2023_order_and_nested_lists() {
        let doc = r#"<log xes.version="2.0" xmlns="http://www.xes-standard.org/">
            <string key="concept:name" value="late-position log name"/>
            <extension name="Time" prefix="time" uri="http://www.xes-standard.org/time.xesext"/>
            <trace>
              <event>
                <date key="time:timestamp" value="2024-03-04T11:00:00Z"/>
                <list key="l">
                  <values>
                    <list key="inner"><values><int key="i" value="7"/></values></list>
                    <float key="f" value="-INF"/>
                  </values>
                </list>
                <string key="concept:name" value="pump tyres"/>
              </event>
            </trace>
            <classifier name="c" keys="concept:name"/>
          </log>"#;
        let x = read(doc).unwrap();
        assert_eq!(x.meta.attributes[0].0, "concept:name");
        assert_eq!(x.meta.classifiers.len(), 1);
        assert_eq!(x.report.n_generated_labels, 1);
        assert_eq!(x.input.case_names, ["trace-0"]);
        let ea = &x.input.event_attrs;
        assert_eq!(col(ea, "l.0.0").values, Values::I64(vec![7]));
        assert!(matches!(&col(ea, "l.1").values, Values::F64(v) if v[0] == f64::NEG_INFINITY));
    }

    #[test]
    fn missing_label_error_option_names_the_line() {
        let doc = "<log>\n<trace>\n<event><string key=\"concept:name\" value=\"a\"/>\
                   <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/></event>\n</trace>\n</log>";
        let opts = XesReadOptions {
            missing_case_label: MissingCaseLabel::Error,
            ..Default::default()
        };
        let (line, msg) = format_line(read_xes(doc.as_bytes(), &opts, &Control::new()));
        assert_eq!(line, 2, "{msg}");
        assert!(msg.contains("concept:name"), "{msg}");
    }

    #[test]
    fn gzip_is_detected_and_streamed() {
        let x = read_xes_bytes(&gzip(WORKSHOP.as_bytes())).unwrap();
        assert_eq!(x.input.time.len(), 5);
        assert_eq!(x.input.case_names, ["repair-001", "repair-002"]);
        // Two concatenated gzip members are one stream.
        let doc = WORKSHOP.as_bytes();
        let cut = doc.len() / 2;
        let mut two = gzip(&doc[..cut]);
        two.extend(gzip(&doc[cut..]));
        assert_eq!(read_xes_bytes(&two).unwrap().input.time.len(), 5);
    }

    #[test]
    fn truncated_gzip_is_a_format_error() {
        let gz = gzip(WORKSHOP.as_bytes());
        for cut in [gz.len() - 4, gz.len() / 2, 12] {
            let (line, msg) = format_line(read_xes_bytes(&gz[..cut]));
            assert!(line >= 1, "{msg}");
            assert!(
                msg.contains("gzip") || msg.contains("truncated"),
                "{cut}: {msg}"
            );
        }
    }

    #[test]
    fn type_conflicts_fall_back_to_text() {
        let doc = "<log>\n<trace><string key=\"concept:name\" value=\"c\"/>\n\
            <event><string key=\"concept:name\" value=\"a\"/><date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>\n\
            <int key=\"size\" value=\"5\"/><int key=\"n\" value=\"x5\"/><date key=\"d\" value=\"2024-03-04T11:00:00.5Z\"/></event>\n\
            <event><string key=\"concept:name\" value=\"a\"/><date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>\n\
            <string key=\"size\" value=\"large\"/><int key=\"n\" value=\"6\"/><string key=\"d\" value=\"soon\"/></event>\n\
            </trace></log>";
        let x = read(doc).unwrap();
        let ea = &x.input.event_attrs;
        let s = |v: &str| Some(v.to_string());
        assert_eq!(texts(col(ea, "size")), [s("5"), s("large")]);
        assert!(matches!(col(ea, "size").values, Values::Cat { .. }));
        assert_eq!(texts(col(ea, "n")), [s("x5"), s("6")]);
        assert_eq!(
            texts(col(ea, "d")),
            [s("2024-03-04T11:00:00.5+00:00"), s("soon")]
        );
        let c = &x.report.type_conflicts;
        assert_eq!(c.len(), 3, "{c:?}");
        assert!(
            c[0].contains("'n'") && c[0].contains("line 4") && c[0].contains("does not parse"),
            "{c:?}"
        );
        assert!(
            c[1].contains("'size'") && c[1].contains("int") && c[1].contains("line 6"),
            "{c:?}"
        );
    }

    #[test]
    fn repeated_keys_are_kept_under_suffixes() {
        let x = read(&ev(
            "<string key=\"concept:name\" value=\"a\"/>\
             <string key=\"concept:name\" value=\"b\"/>\
             <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>\
             <int key=\"k\" value=\"1\"/><int key=\"k\" value=\"2\"/><int key=\"k\" value=\"3\"/>",
        ))
        .unwrap();
        assert_eq!(x.input.activity_names, ["a"]);
        let ea = &x.input.event_attrs;
        assert_eq!(col(ea, "concept:name#2").values.text(0), "b");
        assert_eq!(col(ea, "k").values, Values::I64(vec![1]));
        assert_eq!(col(ea, "k#2").values, Values::I64(vec![2]));
        assert_eq!(col(ea, "k#3").values, Values::I64(vec![3]));
        assert_eq!(x.report.n_repeated_keys, 3);
    }

    #[test]
    fn unknown_elements_and_text_are_warnings() {
        let doc = "<log>\n<vendor-info><foo/><bar>x</bar></vendor-info>\n\
            <trace><string key=\"concept:name\" value=\"c\"/>\n\
            <event><string key=\"concept:name\" value=\"a\"/><date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/><note/></event>\n\
            <event><string key=\"concept:name\" value=\"a\"/><date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/><note/>stray</event>\n\
            </trace></log>";
        let x = read(doc).unwrap();
        let w = &x.report.warnings;
        assert_eq!(w.len(), 3, "{w:?}");
        assert!(
            w[0].starts_with("line 2:") && w[0].contains("<vendor-info>"),
            "{w:?}"
        );
        assert!(
            w[1].starts_with("line 4 (and 1 more times):") && w[1].contains("<note>"),
            "{w:?}"
        );
        assert!(
            w[2].starts_with("line 5:") && w[2].contains("text content"),
            "{w:?}"
        );
        assert_eq!(x.input.time.len(), 2);
    }

    #[test]
    fn duplicate_case_labels_are_counted() {
        let t = "<trace><string key=\"concept:name\" value=\"same\"/><event><string key=\"concept:name\" value=\"a\"/>\
                 <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/></event></trace>";
        let x = read(&format!("<log>{t}{t}</log>")).unwrap();
        assert_eq!(x.input.case_names, ["same", "same"]);
        assert_eq!(x.report.n_duplicate_labels, 1);
        assert!(
            x.report.warnings[0].starts_with("1 traces reuse"),
            "{:?}",
            x.report.warnings
        );
    }

    #[test]
    fn trace_label_and_attributes_may_follow_the_events() {
        let e = "<event><string key=\"concept:name\" value=\"a\"/>\
                 <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/></event>";
        let doc = format!(
            "<log><trace>{e}<string key=\"concept:name\" value=\"late\"/><int key=\"n\" value=\"1\"/></trace>\
             <trace><int key=\"n\" value=\"2\"/></trace>\
             <trace><int key=\"n\" value=\"oops\"/>{e}</trace></log>"
        );
        let x = read(&doc).unwrap();
        assert_eq!(x.input.case_names, ["late", "trace-2"]);
        assert_eq!(x.report.n_empty_traces, 1);
        // The empty trace's value is gone with its trace; the bad int turns the column to text.
        let n = col(case_cols(&x), "n");
        assert_eq!(texts(n), [Some("1".into()), Some("oops".into())]);
        assert_eq!(x.report.type_conflicts.len(), 1);
    }

    // Hostile input: XML 1.0 section 4.2 entities are never expanded.
    #[test]
    fn billion_laughs_is_refused_quickly() {
        let t0 = Instant::now();
        let (line, msg) = format_line(read(LAUGHS));
        assert!(t0.elapsed().as_millis() < 500);
        assert_eq!(line, 2, "{msg}");
        assert!(msg.contains("DOCTYPE"), "{msg}");
        // The same gzip-compressed, and after comments and processing instructions.
        let (line, _) = format_line(read_xes_bytes(&gzip(LAUGHS.as_bytes())));
        assert_eq!(line, 2);
        let doc = format!(
            "<!-- a\ncomment -->\n<?pi x?>\n{}",
            &LAUGHS[LAUGHS.find("<!DOCTYPE").unwrap()..]
        );
        assert_eq!(format_line(read(&doc)).0, 4);
    }

    #[test]
    fn external_entities_and_undeclared_entities_are_refused() {
        let ext = "<?xml version=\"1.0\"?>\n<!DOCTYPE log SYSTEM \"file:///etc/passwd\">\n<log/>";
        assert_eq!(format_line(read(ext)).0, 2);
        let ext2 = "<?xml version=\"1.0\"?>\n<!DOCTYPE log [<!ENTITY x SYSTEM \"http://example.invalid/x\">]>\n<log>&x;</log>";
        assert_eq!(format_line(read(ext2)).0, 2);
        // Without a DTD, an entity reference other than the predefined five is an error.
        let (line, msg) = format_line(read(&ev("<string key=\"concept:name\" value=\"&x;\"/>")));
        assert_eq!(line, 6, "{msg}");
        assert!(msg.contains("&x;"), "{msg}");
        // A DOCTYPE inside the document is refused too.
        let inner = "<log>\n<!DOCTYPE x>\n</log>";
        assert!(matches!(read(inner), Err(TmError::Format { .. })));
    }

    #[test]
    fn hostile_shapes_are_bounded() {
        // Deep nesting.
        let deep = ev(&format!(
            "{}{}",
            "<list key=\"l\">".repeat(100),
            "</list>".repeat(100)
        ));
        let (line, msg) = format_line(read(&deep));
        assert_eq!(line, 6);
        assert!(msg.contains("nested more than 64"), "{msg}");
        // A different key on every event: columns x rows past the budget is a Limit error.
        let e = |k: usize| {
            format!(
                "<event><string key=\"concept:name\" value=\"a\"/>\
                 <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>\
                 <int key=\"k{k}\" value=\"1\"/></event>"
            )
        };
        let doc = format!(
            "<log><trace>{}</trace></log>",
            (0..200).map(e).collect::<String>()
        );
        let opts = XesReadOptions {
            max_attribute_cells: 10_000,
            ..Default::default()
        };
        let err = read_xes(doc.as_bytes(), &opts, &Control::new()).unwrap_err();
        assert!(matches!(err, TmError::Limit { .. }), "{err:?}");
        assert!(err.to_string().contains("max_attribute_cells"), "{err}");
        assert!(read(&doc).is_ok());
        // Many repeats of one key in one element stay linear.
        let rep = ev(&format!(
            "<string key=\"concept:name\" value=\"a\"/>\
             <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>{}",
            "<int key=\"k\" value=\"1\"/>".repeat(3000)
        ));
        let t0 = Instant::now();
        let x = read(&rep).unwrap();
        assert!(t0.elapsed().as_secs_f64() < 2.0);
        assert_eq!(x.input.event_attrs.len(), 3000);
        assert_eq!(x.input.event_attrs[2999].name, "k#3000");
    }

    #[test]
    fn malformed_and_truncated_xml_name_the_line() {
        let mismatched = "<log>\n<trace>\n<event>\n</trace>\n</log>";
        let (line, msg) = format_line(read(mismatched));
        assert_eq!(line, 4, "{msg}");
        let full = ev("<string key=\"concept:name\" value=\"a\"/>\n<date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>");
        assert!(read(&full).is_ok());
        // EOF inside an element and inside a tag.
        let cut = &full[..full.find("</event>").unwrap()];
        let (line, msg) = format_line(read(cut));
        assert!(
            msg.contains("<event> opened on line 5") && line == 8,
            "{line} {msg}"
        );
        let cut = &full[..full.find("time:timestamp").unwrap()];
        let (line, msg) = format_line(read(cut));
        assert_eq!(line, 7, "{msg}");
        for bad in [
            "",
            "   ",
            "<?xml version=\"1.0\"?>",
            "<notxes/>",
            "<log><trace></log>",
            "<log/><log/>",
            "junk<log/>",
            "<log a=\"1\" a=\"2\"/>",
        ] {
            assert!(
                matches!(read(bad), Err(TmError::Format { line: Some(_), .. })),
                "{bad}"
            );
        }
    }

    #[test]
    fn lines_of_multi_line_tags_and_blank_lines() {
        let doc = "<log>\n\n\n<trace>\n  <event>\n    <string\n      key=\"concept:name\"\n      \
                   value=\"&bad;\"/>\n</event></trace></log>";
        let (line, msg) = format_line(read(doc));
        assert_eq!(line, 6, "{msg}");
        let doc = "<log>\n\n<trace>\n\n  stray text\n<event/></trace></log>";
        let (line, _) = format_line(read(doc));
        assert_eq!(line, 6); // the event without concept:name
        let doc = "<log>\n\n<trace>\n\n  stray text\n</trace></log>";
        let x = read(doc).unwrap();
        assert!(
            x.report.warnings[0].starts_with("line 5:"),
            "{:?}",
            x.report.warnings
        );
    }

    #[test]
    fn non_utf8_is_a_format_error() {
        let doc = ev("<string key=\"concept:name\" value=\"caf\u{e9}\"/>\n<date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>");
        let mut b = doc.into_bytes();
        let at = b.windows(2).position(|w| w == [0xC3, 0xA9]).unwrap();
        b.splice(at..at + 2, [0xE9]); // Latin-1 'é'
        let (line, msg) = format_line(read_xes_bytes(&b));
        assert_eq!(line, 6);
        assert!(msg.contains("UTF-8"), "{msg}");
        let utf16 = [0xFF, 0xFE, b'<', 0, b'l', 0];
        assert_eq!(format_line(read_xes_bytes(&utf16)).0, 1);
    }

    #[test]
    fn missing_or_bad_activity_and_timestamp_name_the_line() {
        let (line, msg) = format_line(read(&ev(
            "<date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>",
        )));
        assert_eq!(line, 5, "{msg}");
        assert!(msg.contains("concept:name"), "{msg}");
        match read(&ev("<string key=\"concept:name\" value=\"a\"/>")) {
            Err(TmError::Timestamp {
                row: Some(0),
                line: Some(5),
                message,
                ..
            }) => {
                assert!(message.starts_with("line 5:"), "{message}");
            }
            other => panic!("{other:?}"),
        }
        match read(&ev("<string key=\"concept:name\" value=\"a\"/>\n<date key=\"time:timestamp\" value=\"2024-02-30T11:00:00Z\"/>")) {
            Err(TmError::Timestamp { message, line, .. }) => {
                assert_eq!(line, Some(7));
                assert!(message.starts_with("line 7:") && message.contains("2024-02-30"), "{message}");
            }
            other => panic!("{other:?}"),
        }
        let (line, msg) = format_line(read(&ev("<int key=\"n\"/>")));
        assert_eq!(line, 6);
        assert!(msg.contains("'value'"), "{msg}");
    }

    #[test]
    fn attribute_value_normalisation() {
        let x = read(&ev(
            "<string key=\"concept:name\" value=\"a\r\nb\tc&#10;d&#x41;&apos;&quot;\"/>\
                          <date key=\"time:timestamp\" value=\"2024-03-04T11:00:00Z\"/>",
        ))
        .unwrap();
        assert_eq!(x.input.activity_names, ["a b c\ndA'\""]);
        assert!(read(&ev("<string key=\"concept:name\" value=\"&#0;\"/>")).is_err());
    }

    #[test]
    fn cancellation_and_progress() {
        let doc = synthetic_xes(10_000, 7);
        let ctl = Control::new();
        let x = read_xes(doc.as_slice(), &XesReadOptions::default(), &ctl).unwrap();
        assert_eq!(x.input.time.len(), 10_000);
        assert_eq!(ctl.progress().0, doc.len() as u64);
        let ctl = Control::new();
        ctl.cancel();
        assert_eq!(
            read_xes(doc.as_slice(), &XesReadOptions::default(), &ctl).unwrap_err(),
            TmError::Interrupted
        );
    }

    #[test]
    fn path_reading_works_for_plain_and_gzip() {
        let dir = std::env::temp_dir().join(format!("tracemill-xes-read-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join("w.xes.gz");
        std::fs::write(&p, gzip(WORKSHOP.as_bytes())).unwrap();
        assert_eq!(read_xes_path(&p).unwrap().input.time.len(), 5);
        let missing = read_xes_path(dir.join("nope.xes")).unwrap_err();
        assert!(matches!(missing, TmError::Io { .. }) && missing.to_string().contains("nope.xes"));
        let dir_err = read_xes_path(&dir).unwrap_err();
        assert!(
            matches!(dir_err, TmError::Io { .. }) && dir_err.to_string().contains("tracemill-xes"),
            "{dir_err}"
        );
        std::fs::remove_dir_all(&dir).unwrap();
    }

    #[test]
    fn autotraits() {
        fn is_send_sync<T: Send + Sync>() {}
        is_send_sync::<XesLog>();
        is_send_sync::<XesMeta>();
        is_send_sync::<XesReport>();
        is_send_sync::<XesReadOptions>();
    }

    /// A synthetic bicycle-workshop XES document with `n_events` events (about 8 per case),
    /// shaped like common exports: 5 attributes per event (`extra` more int/string/boolean
    /// ones when asked), 3 per trace, tab indentation.
    pub(crate) fn synthetic_xes(n_events: usize, seed: u64) -> Vec<u8> {
        synthetic_xes_wide(n_events, seed, 0)
    }

    pub(crate) fn synthetic_xes_wide(n_events: usize, seed: u64, extra: usize) -> Vec<u8> {
        let acts = [
            "register bike",
            "inspect frame",
            "replace chain",
            "true wheel",
            "adjust brakes",
            "test ride",
            "invoice",
            "hand over",
        ];
        let people = ["Ana", "Bo", "Chen", "Dara", "Eli"];
        let mut x = seed | 1;
        let mut rnd = move || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        let mut out = Vec::with_capacity(n_events * 420);
        out.extend_from_slice(
            b"<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<log xes.version=\"1849-2016\" \
              xes.features=\"nested-attributes\" xmlns=\"http://www.xes-standard.org/\">\n",
        );
        let mut t: i64 = 1_709_539_200_000_000_000;
        let mut e = 0;
        let mut case = 0;
        while e < n_events {
            let _ = write!(
                out,
                "\t<trace>\n\t\t<string key=\"concept:name\" value=\"repair-{case:06}\"/>\n\
                 \t\t<string key=\"bike model\" value=\"model-{}\"/>\n\
                 \t\t<boolean key=\"warranty\" value=\"{}\"/>\n",
                rnd() % 40,
                rnd() % 2 == 0
            );
            for act in acts {
                if e == n_events {
                    break;
                }
                t += (rnd() % 3_600_000) as i64 * 1_000_000;
                let mut ts = Vec::new();
                format_ns_into(&mut ts, t);
                let _ = write!(
                    out,
                    "\t\t<event>\n\t\t\t<string key=\"concept:name\" value=\"{}\"/>\n\
                     \t\t\t<date key=\"time:timestamp\" value=\"{}\"/>\n\
                     \t\t\t<string key=\"org:resource\" value=\"{}\"/>\n\
                     \t\t\t<string key=\"lifecycle:transition\" value=\"complete\"/>\n\
                     \t\t\t<float key=\"cost:total\" value=\"{}.{}\"/>\n",
                    act,
                    String::from_utf8_lossy(&ts),
                    people[(rnd() % 5) as usize],
                    rnd() % 200,
                    rnd() % 100
                );
                for k in 0..extra {
                    let _ = match k % 3 {
                        0 => writeln!(
                            out,
                            "\t\t\t<int key=\"count {k}\" value=\"{}\"/>",
                            rnd() % 1000
                        ),
                        1 => writeln!(
                            out,
                            "\t\t\t<string key=\"tag {k}\" value=\"t{}\"/>",
                            rnd() % 50
                        ),
                        _ => writeln!(
                            out,
                            "\t\t\t<boolean key=\"flag {k}\" value=\"{}\"/>",
                            rnd() % 2 == 0
                        ),
                    };
                }
                out.extend_from_slice(b"\t\t</event>\n");
                e += 1;
            }
            out.extend_from_slice(b"\t</trace>\n");
            case += 1;
        }
        out.extend_from_slice(b"</log>\n");
        out
    }

    /// CPU time of this thread in seconds (Linux `schedstat`), so that a busy machine does not
    /// distort the figure; wall time elsewhere.
    pub(crate) fn thread_cpu_seconds() -> Option<f64> {
        let s = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
        let ns: f64 = s.split_whitespace().next()?.parse().ok()?;
        Some(ns / 1e9)
    }

    /// Run `f` and return (wall seconds, CPU seconds of this thread if known).
    pub(crate) fn timed(f: impl FnOnce()) -> (f64, Option<f64>) {
        let c0 = thread_cpu_seconds();
        let t0 = Instant::now();
        f();
        let wall = t0.elapsed().as_secs_f64();
        let cpu = c0.and_then(|c0| thread_cpu_seconds().map(|c1| c1 - c0));
        (wall, cpu)
    }

    /// Throughput on uncompressed XML; run with
    /// `cargo test --release -- --ignored --nocapture xes_read_throughput`.
    #[test]
    #[ignore]
    fn xes_read_throughput() {
        let doc = synthetic_xes(200_000, 42);
        let mb = doc.len() as f64 / 1e6;
        let (mut wall, mut cpu) = (f64::INFINITY, f64::INFINITY);
        for _ in 0..5 {
            let (w, c) = timed(|| {
                let x = read_xes_bytes(&doc).unwrap();
                assert_eq!(x.input.time.len(), 200_000);
            });
            wall = wall.min(w);
            cpu = cpu.min(c.unwrap_or(w));
        }
        println!(
            "XES read: {mb:.1} MB, 200000 events, best of 5: {wall:.3} s wall = {:.0} MB/s; \
             {cpu:.3} s CPU = {:.0} MB/s on one core",
            mb / wall,
            mb / cpu
        );
        let wide = synthetic_xes_wide(100_000, 42, 12);
        let wmb = wide.len() as f64 / 1e6;
        let mut wcpu = f64::INFINITY;
        for _ in 0..3 {
            let (w, c) = timed(|| {
                read_xes_bytes(&wide).unwrap();
            });
            wcpu = wcpu.min(c.unwrap_or(w));
        }
        println!(
            "XES read, 17 attributes per event: {wmb:.1} MB, 100000 events, {wcpu:.3} s CPU = {:.0} MB/s",
            wmb / wcpu
        );
        let gz = gzip(&doc);
        let (w, c) = timed(|| {
            read_xes_bytes(&gz).unwrap();
        });
        let c = c.unwrap_or(w);
        println!(
            "XES read gzip: {:.1} MB compressed, {w:.3} s wall, {c:.3} s CPU = {:.0} MB/s of XML",
            gz.len() as f64 / 1e6,
            mb / c
        );
    }
}
