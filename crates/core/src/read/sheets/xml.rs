//! A small XML scanner for the parts of a workbook: start and end tags
//! with their attributes, text and CDATA, nothing more. Comments,
//! processing instructions and a document type declaration are skipped;
//! entities are the five of XML (`&amp;` `&lt;` `&gt;` `&quot;` `&apos;`)
//! and numeric character references, and any other is an error (so no
//! entity can expand). Text is handed out raw and decoded on request, so
//! only the cells that are kept cost a copy.

use crate::error::Error;

/// One piece of a document.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Event<'a> {
    /// `<name attributes>` or `<name attributes/>` (`empty`); no end event
    /// follows an empty element.
    Start {
        /// The qualified name.
        name: &'a str,
        /// The attributes as written (see [`Attributes`]).
        attributes: &'a str,
        /// Whether the element closed itself (`<b/>`).
        empty: bool,
    },
    /// `</name>`.
    End {
        /// The qualified name.
        name: &'a str,
    },
    /// Character data as written (entities not yet decoded).
    Text(&'a str),
    /// The contents of `<![CDATA[...]]>`, taken literally.
    CData(&'a str),
}

/// The part of a qualified name after its prefix: `c` for `x:c`.
pub fn local(name: &str) -> &str {
    name.rsplit_once(':').map_or(name, |(_, l)| l)
}

/// Walks a document's events.
pub struct Scanner<'a> {
    text: &'a str,
    at: usize,
    part: &'a str,
}

/// The error for a part that is not well-formed.
pub fn damaged(part: &str, detail: &str) -> Error {
    Error::invalid_data(format!(
        "the spreadsheet's part '{part}' is damaged ({detail}); open the file in the spreadsheet program and save it again"
    ))
}

impl<'a> Scanner<'a> {
    /// A scanner over `bytes`, the part named `part` (for messages). The
    /// bytes must be UTF-8, as every part of `.xlsx` and `.ods` files is.
    pub fn new(bytes: &'a [u8], part: &'a str) -> Result<Self, Error> {
        let text = std::str::from_utf8(bytes).map_err(|e| damaged(part, &format!("not UTF-8 text at byte {}", e.valid_up_to())))?;
        Ok(Scanner { text: text.strip_prefix('\u{feff}').unwrap_or(text), at: 0, part })
    }

    fn error(&self, detail: &str) -> Error {
        damaged(self.part, &format!("{detail} at byte {}", self.at))
    }

    /// The next event, or `None` at the end of the document.
    #[allow(clippy::should_implement_trait)]
    pub fn next(&mut self) -> Result<Option<Event<'a>>, Error> {
        loop {
            let rest = &self.text[self.at..];
            if rest.is_empty() {
                return Ok(None);
            }
            if !rest.starts_with('<') {
                let end = rest.find('<').unwrap_or(rest.len());
                self.at += end;
                return Ok(Some(Event::Text(&rest[..end])));
            }
            if let Some(body) = rest.strip_prefix("<![CDATA[") {
                let end = body.find("]]>").ok_or_else(|| self.error("unclosed CDATA section"))?;
                self.at += 9 + end + 3;
                return Ok(Some(Event::CData(&body[..end])));
            }
            if let Some(comment) = rest.strip_prefix("<!--") {
                let end = comment.find("-->").ok_or_else(|| self.error("unclosed comment"))?;
                self.at += 4 + end + 3;
                continue;
            }
            if rest.starts_with("<?") {
                let end = rest.find("?>").ok_or_else(|| self.error("unclosed processing instruction"))?;
                self.at += end + 2;
                continue;
            }
            if rest.starts_with("<!") {
                // A document type declaration, possibly with an internal
                // subset in brackets. Its entity definitions are ignored:
                // an entity other than XML's own is refused when met.
                let mut depth = 0i32;
                let end = rest
                    .char_indices()
                    .find(|&(_, c)| {
                        match c {
                            '[' => depth += 1,
                            ']' => depth -= 1,
                            '>' if depth <= 0 => return true,
                            _ => {}
                        }
                        false
                    })
                    .map(|(i, _)| i)
                    .ok_or_else(|| self.error("unclosed declaration"))?;
                self.at += end + 1;
                continue;
            }
            if let Some(body) = rest.strip_prefix("</") {
                let end = body.find('>').ok_or_else(|| self.error("unclosed end tag"))?;
                self.at += 2 + end + 1;
                return Ok(Some(Event::End { name: body[..end].trim_end() }));
            }
            let body = &rest[1..];
            let name_end = body.find(|c: char| c.is_ascii_whitespace() || c == '/' || c == '>').unwrap_or(body.len());
            let name = &body[..name_end];
            if name.is_empty() {
                return Err(self.error("a '<' that starts no tag"));
            }
            // Attributes run to the first '>' outside quotes.
            let mut quote = None;
            let close = body[name_end..]
                .char_indices()
                .find(|&(_, c)| match quote {
                    Some(q) => {
                        if c == q {
                            quote = None;
                        }
                        false
                    }
                    None => {
                        if c == '"' || c == '\'' {
                            quote = Some(c);
                        }
                        c == '>'
                    }
                })
                .map(|(i, _)| name_end + i)
                .ok_or_else(|| self.error("unclosed tag"))?;
            let inside = &body[name_end..close];
            let (attributes, empty) = match inside.strip_suffix('/') {
                Some(a) => (a, true),
                None => (inside, false),
            };
            let mut check = Attributes { rest: attributes };
            while let Some(attribute) = check.next_checked() {
                if attribute.is_err() {
                    return Err(self.error(&format!("badly written attributes in <{name}>")));
                }
            }
            self.at += 1 + close + 1;
            return Ok(Some(Event::Start { name, attributes, empty }));
        }
    }

    /// Skips to the end of the element whose start was just read (not
    /// an empty one), nested elements included.
    pub fn skip_element(&mut self) -> Result<(), Error> {
        let mut depth = 1usize;
        while let Some(event) = self.next()? {
            match event {
                Event::Start { empty: false, .. } => depth += 1,
                Event::End { .. } => {
                    depth -= 1;
                    if depth == 0 {
                        return Ok(());
                    }
                }
                _ => {}
            }
        }
        Err(self.error("the document ends inside an element"))
    }

    /// The error for the document ending before `what` was closed.
    pub fn ended_inside(&self, what: &str) -> Error {
        self.error(&format!("the document ends inside <{what}>"))
    }
}

/// The attributes of a start tag, in order: `(qualified name, raw value)`.
#[derive(Clone, Copy)]
pub struct Attributes<'a> {
    rest: &'a str,
}

impl<'a> Attributes<'a> {
    /// Iterates over `attributes` as given by [`Event::Start`] (checked
    /// by the scanner, so well formed).
    pub fn of(attributes: &'a str) -> Self {
        Attributes { rest: attributes }
    }

    fn next_checked(&mut self) -> Option<Result<(&'a str, &'a str), ()>> {
        let rest = self.rest.trim_start();
        if rest.is_empty() {
            return None;
        }
        let parsed = (|| {
            let equals = rest.find('=')?;
            let name = rest[..equals].trim_end();
            if name.is_empty() || name.contains(|c: char| c.is_ascii_whitespace() || c == '"' || c == '\'') {
                return None;
            }
            let after = rest[equals + 1..].trim_start();
            let quote = after.chars().next().filter(|&c| c == '"' || c == '\'')?;
            let end = after[1..].find(quote)?;
            Some(((name, &after[1..1 + end]), &after[1 + end + 1..]))
        })();
        match parsed {
            Some((pair, rest)) => {
                self.rest = rest;
                Some(Ok(pair))
            }
            None => {
                self.rest = "";
                Some(Err(()))
            }
        }
    }

    /// The raw value of the attribute named `name` (qualified, as written).
    pub fn get(self, name: &str) -> Option<&'a str> {
        self.into_iter().find(|(n, _)| *n == name).map(|(_, v)| v)
    }

    /// The raw value of the first attribute whose local name is `name`.
    pub fn get_local(self, name: &str) -> Option<&'a str> {
        self.into_iter().find(|(n, _)| local(n) == name).map(|(_, v)| v)
    }
}

impl<'a> Iterator for Attributes<'a> {
    type Item = (&'a str, &'a str);

    fn next(&mut self) -> Option<Self::Item> {
        self.next_checked().and_then(Result::ok)
    }
}

/// Appends `raw` (text or an attribute value as written) to `out` with
/// its entities and character references decoded and line ends made
/// `\n`, as an XML processor does. With `ooxml_escapes`, the escapes
/// `_xHHHH_` that Office Open XML writes for characters XML cannot hold
/// (`_x000D_` for a carriage return) are decoded as well (in the text
/// between entities, as written).
pub fn decode_into(raw: &str, out: &mut String, ooxml_escapes: bool, part: &str) -> Result<(), Error> {
    let mut rest = raw;
    loop {
        let (plain, after) = match rest.find('&') {
            Some(i) => (&rest[..i], Some(&rest[i + 1..])),
            None => (rest, None),
        };
        // Line ends first, so that an escaped carriage return survives.
        let normalised;
        let plain = if plain.contains('\r') {
            normalised = plain.replace("\r\n", "\n").replace('\r', "\n");
            normalised.as_str()
        } else {
            plain
        };
        if ooxml_escapes && plain.contains("_x") {
            push_unescaped(plain, out);
        } else {
            out.push_str(plain);
        }
        let Some(after) = after else { return Ok(()) };
        let end = after.find(';').filter(|&e| e <= 12).ok_or_else(|| damaged(part, "an '&' that starts no entity"))?;
        let entity = &after[..end];
        let c = match entity {
            "amp" => '&',
            "lt" => '<',
            "gt" => '>',
            "quot" => '"',
            "apos" => '\'',
            _ => {
                let code = if let Some(hex) = entity.strip_prefix("#x").or_else(|| entity.strip_prefix("#X")) {
                    u32::from_str_radix(hex, 16).ok()
                } else if let Some(decimal) = entity.strip_prefix('#') {
                    decimal.parse::<u32>().ok()
                } else {
                    None
                };
                code.and_then(char::from_u32).ok_or_else(|| damaged(part, &format!("the unknown entity '&{entity};'")))?
            }
        };
        out.push(c);
        rest = &after[end + 1..];
    }
}

/// Decodes `_xHHHH_` escapes (ECMA-376 Part 1, the escaping of the
/// string type ST_Xstring).
fn push_unescaped(text: &str, out: &mut String) {
    let mut rest = text;
    while let Some(i) = rest.find("_x") {
        out.push_str(&rest[..i]);
        let candidate = &rest[i..];
        let decoded = candidate
            .get(2..6)
            .filter(|hex| hex.bytes().all(|b| b.is_ascii_hexdigit()) && candidate.as_bytes().get(6) == Some(&b'_'))
            .and_then(|hex| u32::from_str_radix(hex, 16).ok())
            .and_then(char::from_u32);
        match decoded {
            Some(c) => {
                out.push(c);
                rest = &candidate[7..];
            }
            None => {
                out.push_str("_x");
                rest = &candidate[2..];
            }
        }
    }
    out.push_str(rest);
}

/// `raw` decoded (see [`decode_into`]), without Office escapes.
pub fn decode(raw: &str, part: &str) -> Result<String, Error> {
    let mut out = String::with_capacity(raw.len());
    decode_into(raw, &mut out, false, part)?;
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn events(text: &str) -> Vec<Event<'_>> {
        let mut scanner = Scanner::new(text.as_bytes(), "test").unwrap();
        let mut all = Vec::new();
        while let Some(e) = scanner.next().unwrap() {
            all.push(e);
        }
        all
    }

    #[test]
    fn tags_text_and_attributes() {
        let doc = "<?xml version=\"1.0\"?><!-- note --><a x='1' y=\"a>b\"><b/>t&amp;u<![CDATA[<raw>]]></a>";
        assert_eq!(
            events(doc),
            [
                Event::Start { name: "a", attributes: " x='1' y=\"a>b\"", empty: false },
                Event::Start { name: "b", attributes: "", empty: true },
                Event::Text("t&amp;u"),
                Event::CData("<raw>"),
                Event::End { name: "a" },
            ]
        );
        let attributes: Vec<_> = Attributes::of(" x='1' r:id=\"a>b\"").collect();
        assert_eq!(attributes, [("x", "1"), ("r:id", "a>b")]);
        assert_eq!(Attributes::of(" r:id='rId1'").get_local("id"), Some("rId1"));
        assert!(Scanner::new(b"<a x=1>", "test").unwrap().next().is_err());
        assert!(Scanner::new(b"<a", "test").unwrap().next().is_err());
    }

    #[test]
    fn entities_references_and_office_escapes() {
        assert_eq!(decode("a&lt;b&gt;c&amp;&quot;&apos;&#65;&#x42;\r\nz\r", "t").unwrap(), "a<b>c&\"'AB\nz\n");
        assert!(decode("&nbsp;", "t").is_err());
        assert!(decode("a & b", "t").is_err());
        assert!(decode("&#xD800;", "t").is_err());
        let mut out = String::new();
        decode_into("line_x000D_end _x005F_x000D_ _xZZ_", &mut out, true, "t").unwrap();
        assert_eq!(out, "line\rend _x000D_ _xZZ_");
    }
}
