//! Input side of the XES reader: progress counting, gzip detection, a line-counting buffer,
//! the prolog scan that refuses document type declarations, and attribute decoding.
//!
//! Lines are counted in [`Source`]'s `consume`, i.e. once per byte the XML parser has finished
//! with, so every message can name its line without rescanning. The prolog (everything before
//! the root element) is scanned here rather than by the XML parser so that a `<!DOCTYPE` is
//! refused after its first 9 bytes, whatever its length: entities are never defined, expanded
//! or fetched. Attribute values are decoded per XML 1.0 (predefined entities, character
//! references, attribute-value normalisation, sections 3.3.3 and 4.6).

use std::borrow::Cow;
use std::cell::Cell;
use std::io::{self, BufRead, Read};
use std::rc::Rc;

use quick_xml::events::BytesStart;

use crate::error::{TmError, TmResult};

/// Counts the raw (possibly compressed) bytes consumed, for progress reporting.
pub(super) struct RawCount<R> {
    pub(super) inner: R,
    pub(super) consumed: Rc<Cell<u64>>,
}

impl<R: BufRead> Read for RawCount<R> {
    fn read(&mut self, out: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(out)?;
        self.consumed.set(self.consumed.get() + n as u64);
        Ok(n)
    }
}

impl<R: BufRead> BufRead for RawCount<R> {
    fn fill_buf(&mut self) -> io::Result<&[u8]> {
        self.inner.fill_buf()
    }
    fn consume(&mut self, amt: usize) {
        self.consumed.set(self.consumed.get() + amt as u64);
        self.inner.consume(amt);
    }
}

/// The buffered, line-counting source the XML parser reads from.
///
/// Newlines are counted in `consume`, i.e. exactly once per byte the parser has finished with,
/// so the line of the markup being parsed is known without rescanning anything.
pub(super) struct Source<'a> {
    pub(super) inner: Box<dyn Read + 'a>,
    pub(super) buf: Box<[u8]>,
    pub(super) pos: usize,
    pub(super) cap: usize,
    pub(super) newlines: u64,
    pub(super) gzip: bool,
}

impl Source<'_> {
    pub(super) fn line(&self) -> u64 {
        self.newlines + 1
    }
    /// Make at least `n` bytes available (fewer only at end of input); `n <= BUF_SIZE`.
    pub(super) fn peek(&mut self, n: usize) -> io::Result<&[u8]> {
        if self.cap - self.pos < n {
            self.buf.copy_within(self.pos..self.cap, 0);
            self.cap -= self.pos;
            self.pos = 0;
            while self.cap < n {
                match self.inner.read(&mut self.buf[self.cap..]) {
                    Ok(0) => break,
                    Ok(k) => self.cap += k,
                    Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                    Err(e) => return Err(e),
                }
            }
        }
        Ok(&self.buf[self.pos..self.cap])
    }
}

impl Read for Source<'_> {
    fn read(&mut self, out: &mut [u8]) -> io::Result<usize> {
        let avail = self.fill_buf()?;
        let n = avail.len().min(out.len());
        out[..n].copy_from_slice(&avail[..n]);
        self.consume(n);
        Ok(n)
    }
}

impl BufRead for Source<'_> {
    fn fill_buf(&mut self) -> io::Result<&[u8]> {
        if self.pos >= self.cap {
            self.pos = 0;
            self.cap = 0;
            loop {
                match self.inner.read(&mut self.buf) {
                    Ok(k) => {
                        self.cap = k;
                        break;
                    }
                    Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                    Err(e) => return Err(e),
                }
            }
        }
        Ok(&self.buf[self.pos..self.cap])
    }
    fn consume(&mut self, amt: usize) {
        let end = (self.pos + amt).min(self.cap);
        self.newlines += count_newlines(&self.buf[self.pos..end]);
        self.pos = end;
    }
}

pub(super) fn count_newlines(b: &[u8]) -> u64 {
    // memchr's counter is vectorised and returns at once on the short, newline-free tags
    // that make up most calls.
    memchr::memchr_iter(b'\n', b).count() as u64
}

pub(super) fn io_to_tm(e: &io::Error, gzip: bool, line: u64) -> TmError {
    use io::ErrorKind as K;
    if gzip
        && matches!(
            e.kind(),
            K::UnexpectedEof | K::InvalidData | K::InvalidInput
        )
    {
        TmError::format(
            Some(line),
            format!(
                "line {line}: the gzip stream is truncated or corrupt ({e}); \
                 the decompressed XML was readable up to this line"
            ),
        )
    } else {
        TmError::Io {
            message: format!("reading XES near line {line}: {e}"),
        }
    }
}

/// Skip the prolog (BOM, XML declaration, comments, processing instructions) up to the root
/// element, refusing a document type declaration as soon as its first 9 bytes are seen.
///
/// Doing this before the XML parser runs means a DTD is never buffered, however long.
pub(super) fn skip_prolog(src: &mut Source<'_>) -> TmResult<()> {
    let fail = |src: &Source<'_>, e: io::Error| io_to_tm(&e, src.gzip, src.line());
    let head = match src.peek(4) {
        Ok(h) => h,
        Err(e) => return Err(fail(src, e)),
    };
    if head.starts_with(&[0xEF, 0xBB, 0xBF]) {
        src.consume(3);
    } else if head.starts_with(&[0xFE, 0xFF])
        || head.starts_with(&[0xFF, 0xFE])
        || (head.len() >= 2 && (head[0] == 0 || head[1] == 0))
    {
        return Err(TmError::format(
            Some(1),
            "line 1: the file looks UTF-16 or UTF-32 encoded; tracemill reads UTF-8 XES only",
        ));
    }
    loop {
        // Whitespace.
        loop {
            let b = match src.fill_buf() {
                Ok(b) => b,
                Err(e) => return Err(fail(src, e)),
            };
            if b.is_empty() {
                let line = src.line();
                return Err(TmError::format(
                    Some(line),
                    format!("line {line}: the input ended before the <log> element"),
                ));
            }
            let n = b.iter().take_while(|c| c.is_ascii_whitespace()).count();
            let all = n == b.len();
            src.consume(n);
            if !all {
                break;
            }
        }
        let line = src.line();
        let h = match src.peek(9) {
            Ok(h) => h,
            Err(e) => return Err(fail(src, e)),
        };
        if h.starts_with(b"<?") {
            src.consume(2);
            skip_until(src, b"?>", line, "processing instruction")?;
        } else if h.starts_with(b"<!--") {
            src.consume(4);
            skip_until(src, b"-->", line, "comment")?;
        } else if h.len() >= 9 && h[2..9].eq_ignore_ascii_case(b"DOCTYPE") && h[1] == b'!' {
            return Err(doctype_error(line));
        } else if h.starts_with(b"<!") {
            return Err(TmError::format(
                Some(line),
                format!(
                    "line {line}: unexpected '<!' markup before the <log> element \
                     (document type declarations are refused)"
                ),
            ));
        } else if h.starts_with(b"<") {
            return Ok(());
        } else {
            return Err(TmError::format(
                Some(line),
                format!("line {line}: text before the <log> element; expected XML markup"),
            ));
        }
    }
}

pub(super) fn doctype_error(line: u64) -> TmError {
    TmError::format(
        Some(line),
        format!(
            "line {line}: a document type declaration (<!DOCTYPE ...>) is not allowed in XES; \
             it is refused so that entities are never expanded or fetched"
        ),
    )
}

/// Consume input up to and including `pat` (at most 4 bytes), in bounded memory.
fn skip_until(src: &mut Source<'_>, pat: &[u8], line: u64, what: &str) -> TmResult<()> {
    let mask: u32 = if pat.len() >= 4 {
        u32::MAX
    } else {
        (1u32 << (8 * pat.len())) - 1
    };
    let want = pat.iter().fold(0u32, |w, &b| (w << 8) | u32::from(b));
    let mut window = 0u32;
    loop {
        let b = match src.fill_buf() {
            Ok(b) => b,
            Err(e) => return Err(io_to_tm(&e, src.gzip, src.line())),
        };
        if b.is_empty() {
            return Err(TmError::format(
                Some(line),
                format!(
                    "line {line}: the {what} opened here is not closed before the end of input"
                ),
            ));
        }
        for (i, &c) in b.iter().enumerate() {
            window = ((window << 8) | u32::from(c)) & mask;
            if window == want {
                src.consume(i + 1);
                return Ok(());
            }
        }
        let n = b.len();
        src.consume(n);
    }
}

pub(super) fn utf8<'a>(b: &'a [u8], line: u64, what: &str) -> TmResult<&'a str> {
    std::str::from_utf8(b).map_err(|e| {
        TmError::format(
            Some(line),
            format!(
                "line {line}: {what} is not valid UTF-8 (bad byte at offset {}); \
                 XES files must be UTF-8",
                e.valid_up_to()
            ),
        )
    })
}

/// Decode an attribute value: predefined entities, character references, and XML 1.0
/// attribute-value normalisation (a literal tab, CR, LF or CR LF becomes one space).
fn unescape_attr(raw: &[u8], line: u64) -> TmResult<Cow<'_, [u8]>> {
    // A branch-free scan (vectorised), since nearly all values need no decoding.
    if !raw
        .iter()
        .fold(false, |acc, &b| acc | (b == b'&') | (b < 0x20))
    {
        return Ok(Cow::Borrowed(raw));
    }
    let bad = |what: String| {
        TmError::format(
            Some(line),
            format!("line {line}: {what} in an attribute value"),
        )
    };
    let mut out = Vec::with_capacity(raw.len());
    let mut i = 0;
    while i < raw.len() {
        let b = raw[i];
        match b {
            b'&' => {
                let end = raw[i..]
                    .iter()
                    .position(|&c| c == b';')
                    .map(|p| i + p)
                    .ok_or_else(|| bad("an '&' without a closing ';'".into()))?;
                let name = &raw[i + 1..end];
                match name {
                    b"amp" => out.push(b'&'),
                    b"lt" => out.push(b'<'),
                    b"gt" => out.push(b'>'),
                    b"quot" => out.push(b'"'),
                    b"apos" => out.push(b'\''),
                    _ if name.first() == Some(&b'#') => {
                        let num = &name[1..];
                        let code = if let Some(hex) = num.strip_prefix(b"x") {
                            std::str::from_utf8(hex)
                                .ok()
                                .and_then(|h| u32::from_str_radix(h, 16).ok())
                        } else {
                            std::str::from_utf8(num).ok().and_then(|d| d.parse().ok())
                        };
                        let c = code
                            .and_then(char::from_u32)
                            .filter(|&c| xml_char_ok(c))
                            .ok_or_else(|| {
                                bad(format!(
                                    "the character reference '&{};' is not an XML 1.0 character",
                                    String::from_utf8_lossy(name)
                                ))
                            })?;
                        let mut tmp = [0u8; 4];
                        out.extend_from_slice(c.encode_utf8(&mut tmp).as_bytes());
                    }
                    _ => {
                        return Err(bad(format!(
                            "the entity '&{};' is not one of the five predefined XML entities \
                             (entities from a DTD are refused)",
                            String::from_utf8_lossy(name)
                        )))
                    }
                }
                i = end + 1;
            }
            b'\r' => {
                out.push(b' ');
                if raw.get(i + 1) == Some(&b'\n') {
                    i += 1;
                }
                i += 1;
            }
            b'\t' | b'\n' => {
                out.push(b' ');
                i += 1;
            }
            _ => {
                out.push(b);
                i += 1;
            }
        }
    }
    Ok(Cow::Owned(out))
}

/// Whether `c` may appear in an XML 1.0 document (section 2.2).
pub(crate) fn xml_char_ok(c: char) -> bool {
    matches!(c, '\t' | '\n' | '\r' | '\u{20}'..='\u{D7FF}' | '\u{E000}'..='\u{FFFD}' | '\u{10000}'..)
}

pub(super) fn attr_error(line: u64, msg: impl std::fmt::Display) -> TmError {
    TmError::format(Some(line), format!("line {line}: {msg}"))
}

/// The XML attributes of a start tag, scanned by hand: `name = "value"` pairs, either quote.
///
/// A dedicated scanner is several times faster than a general attribute iterator on the
/// two-attribute elements that make up nearly all of an XES file. It checks what matters for
/// well-formedness here: a name, `=`, a closed quote, no `<` in a value, whitespace between
/// attributes.
struct RawAttrs<'a> {
    s: &'a [u8],
    i: usize,
}

/// An XML attribute name and its raw (undecoded) value.
type NameValue<'a> = (&'a [u8], &'a [u8]);

impl<'a> RawAttrs<'a> {
    fn new(e: &'a BytesStart<'_>) -> Self {
        RawAttrs {
            s: e.attributes_raw(),
            i: 0,
        }
    }

    fn skip_ws(&mut self) {
        while self.s.get(self.i).is_some_and(u8::is_ascii_whitespace) {
            self.i += 1;
        }
    }

    /// The next `(name, raw value)`, `Ok(None)` at the end.
    fn next_attr(&mut self) -> Result<Option<NameValue<'a>>, &'static str> {
        self.skip_ws();
        let s = self.s;
        if self.i >= s.len() {
            return Ok(None);
        }
        let start = self.i;
        while s
            .get(self.i)
            .is_some_and(|&b| b != b'=' && !b.is_ascii_whitespace())
        {
            self.i += 1;
        }
        let name = &s[start..self.i];
        self.skip_ws();
        if s.get(self.i) != Some(&b'=') {
            return Err("an attribute without '=value'");
        }
        if name.is_empty() {
            return Err("an attribute without a name");
        }
        self.i += 1;
        self.skip_ws();
        let q = match s.get(self.i) {
            Some(&q @ (b'"' | b'\'')) => q,
            _ => return Err("an attribute value without quotes"),
        };
        let vstart = self.i + 1;
        let len = memchr::memchr2(q, b'<', &s[vstart..])
            .ok_or("an attribute value whose quote is not closed")?;
        if s[vstart + len] == b'<' {
            return Err("a '<' inside an attribute value (it must be written &lt;)");
        }
        let value = &s[vstart..vstart + len];
        self.i = vstart + len + 1;
        if s.get(self.i).is_some_and(|b| !b.is_ascii_whitespace()) {
            return Err("no whitespace between two attributes");
        }
        Ok(Some((name, value)))
    }
}

fn malformed_attr(line: u64, why: &str) -> TmError {
    attr_error(line, format_args!("malformed XML attribute: {why}"))
}

/// The `key` and `value` XML attributes of an attribute element, decoded.
pub(super) type KeyValue<'b> = (Option<Cow<'b, [u8]>>, Option<Cow<'b, [u8]>>);

pub(super) fn key_value<'b>(e: &'b BytesStart<'_>, line: u64) -> TmResult<KeyValue<'b>> {
    if let Some((k, v)) = canonical_key_value(e.attributes_raw()) {
        return Ok((Some(unescape_attr(k, line)?), Some(unescape_attr(v, line)?)));
    }
    let mut key = None;
    let mut value = None;
    let mut it = RawAttrs::new(e);
    while let Some((name, raw)) = it.next_attr().map_err(|why| malformed_attr(line, why))? {
        let slot = match name {
            b"key" => &mut key,
            b"value" => &mut value,
            _ => continue,
        };
        if slot.is_some() {
            return Err(malformed_attr(
                line,
                &format!("'{}' given twice", String::from_utf8_lossy(name)),
            ));
        }
        *slot = Some(unescape_attr(raw, line)?);
    }
    Ok((key, value))
}

/// The form nearly every XES writer uses, ` key="k" value="v"` (then only whitespace), matched
/// directly; anything else returns `None` and goes through the general scanner.
fn canonical_key_value(raw: &[u8]) -> Option<NameValue<'_>> {
    let rest = raw.strip_prefix(b" key=\"")?;
    let k_end = memchr::memchr2(b'"', b'<', rest)?;
    let (k, rest) = rest.split_at(k_end);
    let rest = rest.strip_prefix(b"\" value=\"")?;
    let v_end = memchr::memchr2(b'"', b'<', rest)?;
    let (v, rest) = rest.split_at(v_end);
    let rest = rest.strip_prefix(b"\"")?;
    rest.iter().all(u8::is_ascii_whitespace).then_some((k, v))
}

/// All XML attributes of an element as decoded strings.
pub(super) fn xml_attrs(e: &BytesStart<'_>, line: u64) -> TmResult<Vec<(String, String)>> {
    let mut out: Vec<(String, String)> = Vec::new();
    let mut it = RawAttrs::new(e);
    while let Some((name, raw)) = it.next_attr().map_err(|why| malformed_attr(line, why))? {
        let k = utf8(name, line, "an XML attribute name")?.to_owned();
        if out.iter().any(|(seen, _)| *seen == k) {
            return Err(malformed_attr(line, &format!("'{k}' given twice")));
        }
        let v = unescape_attr(raw, line)?;
        out.push((k, utf8(&v, line, "an XML attribute value")?.to_owned()));
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use quick_xml::events::Event;

    fn source(bytes: &[u8]) -> Source<'_> {
        Source {
            inner: Box::new(bytes),
            buf: vec![0u8; 16].into_boxed_slice(), // tiny, to cross buffer boundaries
            pos: 0,
            cap: 0,
            newlines: 0,
            gzip: false,
        }
    }

    fn rest(mut s: Source<'_>) -> String {
        let mut out = String::new();
        s.read_to_string(&mut out).unwrap();
        out
    }

    #[test]
    fn prolog_is_skipped_up_to_the_root_with_lines_counted() {
        let doc = "\u{feff}<?xml version=\"1.0\"?>\n<!-- a -- b --->\n<?pi ?>\n\n<log/>";
        let mut s = source(doc.as_bytes());
        skip_prolog(&mut s).unwrap();
        assert_eq!(s.line(), 5);
        assert_eq!(rest(s), "<log/>");
    }

    #[test]
    fn prolog_refusals() {
        for (doc, line) in [
            ("<!DOCTYPE log>", 1),
            ("<?xml version=\"1.0\"?>\n\n<!doctype log>", 3),
            ("<!-- never closed", 1),
            ("<![CDATA[x]]><log/>", 1),
            ("text<log/>", 1),
            ("", 1),
        ] {
            let mut s = source(doc.as_bytes());
            match skip_prolog(&mut s) {
                Err(TmError::Format { line: Some(l), .. }) => assert_eq!(l, line, "{doc}"),
                other => panic!("{doc}: {other:?}"),
            }
        }
    }

    // XML 1.0 section 3.3.3 (attribute-value normalisation) and 4.6 (predefined entities).
    #[test]
    fn attribute_values_are_decoded_per_xml_1_0() {
        let d = |s: &str| {
            unescape_attr(s.as_bytes(), 1).map(|c| String::from_utf8(c.into_owned()).unwrap())
        };
        assert_eq!(d("plain").unwrap(), "plain");
        assert!(matches!(
            unescape_attr(b"plain", 1).unwrap(),
            Cow::Borrowed(_)
        ));
        assert_eq!(d("&lt;&gt;&amp;&quot;&apos;").unwrap(), "<>&\"'");
        assert_eq!(d("&#233;&#xE9;&#x1F6B2;").unwrap(), "éé🚲");
        assert_eq!(d("a\r\nb\rc\nd\te").unwrap(), "a b c d e");
        assert_eq!(d("&#13;&#10;&#9;").unwrap(), "\r\n\t");
        for bad in [
            "&", "&amp", "&nbsp;", "&#xD800;", "&#1;", "&#xFFFE;", "&#;", "&#x;",
        ] {
            assert!(d(bad).is_err(), "{bad}");
        }
    }

    fn attrs_of(tag: &str) -> Result<Vec<(String, String)>, &'static str> {
        let mut r = quick_xml::Reader::from_str(tag);
        let Ok(Event::Empty(e)) = r.read_event() else {
            panic!("{tag}")
        };
        let mut it = RawAttrs::new(&e);
        let mut out = Vec::new();
        while let Some((k, v)) = it.next_attr()? {
            out.push((
                String::from_utf8(k.to_vec()).unwrap(),
                String::from_utf8(v.to_vec()).unwrap(),
            ));
        }
        Ok(out)
    }

    #[test]
    fn canonical_form_shortcut_agrees_with_the_scanner() {
        for tag in [
            "<string key=\"k\" value=\"v\"/>",
            "<string key=\"k\" value=\"v\" />",
            "<string key=\"\" value=\"\"/>",
            "<string key=\"a&amp;b\" value=\"x&#10;y\"/>",
            "<string value=\"v\" key=\"k\"/>",
            "<string key=\"k\"  value=\"v\"/>",
            "<string key='k' value='v'/>",
            "<string key=\"k\" value=\"v\" extra=\"1\"/>",
            "<string key=\"k\" value=\"a<b\"/>",
            "<string key=\"k\" value=\"v\"x=\"1\"/>",
            "<string key=\"k\" value=\"v\" key=\"again\"/>",
        ] {
            let mut r = quick_xml::Reader::from_str(tag);
            let Ok(Event::Empty(e)) = r.read_event() else {
                continue;
            };
            let fast = canonical_key_value(e.attributes_raw());
            let general = key_value(&e, 1);
            if let Some((k, v)) = fast {
                let (gk, gv) = general.unwrap();
                let (k, v) = (unescape_attr(k, 1).unwrap(), unescape_attr(v, 1).unwrap());
                assert_eq!((gk, gv), (Some(k), Some(v)), "{tag}");
            }
        }
        assert!(canonical_key_value(b" key=\"k\" value=\"a<b\"").is_none());
        assert!(canonical_key_value(b" key=\"k\" value=\"v\"x=\"1\"").is_none());
        assert_eq!(
            canonical_key_value(b" key=\"k\" value=\"v\" "),
            Some((&b"k"[..], &b"v"[..]))
        );
    }

    #[test]
    fn attribute_scanner() {
        let kv = |k: &str, v: &str| (k.to_string(), v.to_string());
        assert_eq!(
            attrs_of("<string key=\"a b\" value='x \"y\"'/>").unwrap(),
            [kv("key", "a b"), kv("value", "x \"y\"")]
        );
        assert_eq!(
            attrs_of("<s\n key = \"k\"\tvalue=\"\"/>").unwrap(),
            [kv("key", "k"), kv("value", "")]
        );
        for bad in [
            "<s key/>",
            "<s key=v/>",
            "<s key=\"a<b\"/>",
            "<s key=\"a\"value=\"b\"/>",
            "<s =\"a\"/>",
        ] {
            assert!(attrs_of(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn newline_counting_and_peek_across_refills() {
        let text = "a\nb\n\nccccccccccccccccccccccccc\nd";
        let mut s = source(text.as_bytes());
        assert!(s.peek(9).unwrap().len() >= 9);
        s.consume(5);
        assert_eq!(s.line(), 4);
        assert_eq!(rest(s), &text[5..]);
        assert_eq!(count_newlines(text.as_bytes()), 4);
    }
}
