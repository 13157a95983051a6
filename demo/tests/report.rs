//! Runs the demo binary in a scratch directory and checks its report: the
//! printed sections and caution, and the SVG file, parsed by a small
//! well-formedness checker of our own, holding both charts.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // tests stop loudly

use std::path::PathBuf;
use std::process::Command;

/// A parsed XML element (enough of XML 1.0 for well-formedness: elements,
/// attributes, text, entity and character references, comments,
/// processing instructions, CDATA).
#[derive(Debug)]
struct Element {
    name: String,
    attrs: Vec<(String, String)>,
    children: Vec<Node>,
}

#[derive(Debug)]
enum Node {
    Element(Element),
    Text(String),
}

struct Parser<'a> {
    s: &'a [u8],
    i: usize,
}

fn is_name_char(c: u8) -> bool {
    c.is_ascii_alphanumeric() || matches!(c, b'_' | b'-' | b'.' | b':') || c >= 0x80
}

impl<'a> Parser<'a> {
    fn err<T>(&self, what: &str) -> Result<T, String> {
        Err(format!("{what} at byte {}", self.i))
    }

    fn starts(&self, p: &str) -> bool {
        self.s[self.i..].starts_with(p.as_bytes())
    }

    fn skip_ws(&mut self) {
        while self.i < self.s.len() && self.s[self.i].is_ascii_whitespace() {
            self.i += 1;
        }
    }

    fn skip_until(&mut self, end: &str) -> Result<(), String> {
        while self.i < self.s.len() {
            if self.starts(end) {
                self.i += end.len();
                return Ok(());
            }
            self.i += 1;
        }
        self.err(&format!("unterminated, expected {end}"))
    }

    fn name(&mut self) -> Result<String, String> {
        let start = self.i;
        if self.i >= self.s.len()
            || !(self.s[self.i].is_ascii_alphabetic() || self.s[self.i] == b'_')
        {
            return self.err("bad name start");
        }
        while self.i < self.s.len() && is_name_char(self.s[self.i]) {
            self.i += 1;
        }
        Ok(String::from_utf8_lossy(&self.s[start..self.i]).into_owned())
    }

    /// Text up to `stop`, checking every reference; returned raw.
    fn text_until(&mut self, stop: u8) -> Result<String, String> {
        let start = self.i;
        while self.i < self.s.len() && self.s[self.i] != stop {
            match self.s[self.i] {
                b'&' => {
                    let semi = self.s[self.i..].iter().position(|&c| c == b';');
                    let Some(len) = semi else {
                        return self.err("unterminated reference");
                    };
                    let r = std::str::from_utf8(&self.s[self.i + 1..self.i + len]).unwrap();
                    let ok = matches!(r, "amp" | "lt" | "gt" | "quot" | "apos")
                        || (r.starts_with("#x") && u32::from_str_radix(&r[2..], 16).is_ok())
                        || (r.starts_with('#') && r[1..].parse::<u32>().is_ok());
                    if !ok {
                        return self.err(&format!("bad reference &{r};"));
                    }
                    self.i += len + 1;
                }
                b'<' if stop == b'"' || stop == b'\'' => return self.err("'<' in attribute"),
                _ => self.i += 1,
            }
        }
        Ok(String::from_utf8_lossy(&self.s[start..self.i]).into_owned())
    }

    fn misc(&mut self) -> Result<bool, String> {
        if self.starts("<!--") {
            self.skip_until("-->")?;
            Ok(true)
        } else if self.starts("<?") {
            self.skip_until("?>")?;
            Ok(true)
        } else if self.starts("<!DOCTYPE") {
            self.skip_until(">")?;
            Ok(true)
        } else {
            Ok(false)
        }
    }

    fn element(&mut self) -> Result<Element, String> {
        if !self.starts("<") {
            return self.err("expected '<'");
        }
        self.i += 1;
        let name = self.name()?;
        let mut attrs: Vec<(String, String)> = Vec::new();
        loop {
            let had_ws = self.i < self.s.len() && self.s[self.i].is_ascii_whitespace();
            self.skip_ws();
            if self.starts("/>") {
                self.i += 2;
                return Ok(Element {
                    name,
                    attrs,
                    children: Vec::new(),
                });
            }
            if self.starts(">") {
                self.i += 1;
                break;
            }
            if !had_ws {
                return self.err("attributes must be separated by space");
            }
            let an = self.name()?;
            self.skip_ws();
            if !self.starts("=") {
                return self.err("expected '='");
            }
            self.i += 1;
            self.skip_ws();
            let q = self.s.get(self.i).copied();
            if q != Some(b'"') && q != Some(b'\'') {
                return self.err("unquoted attribute");
            }
            self.i += 1;
            let v = self.text_until(q.unwrap())?;
            if self.i >= self.s.len() {
                return self.err("unterminated attribute");
            }
            self.i += 1;
            if attrs.iter().any(|(n, _)| *n == an) {
                return self.err(&format!("duplicate attribute {an}"));
            }
            attrs.push((an, v));
        }
        let mut children = Vec::new();
        loop {
            if self.i >= self.s.len() {
                return self.err(&format!("unclosed <{name}>"));
            }
            if self.starts("</") {
                self.i += 2;
                let close = self.name()?;
                self.skip_ws();
                if close != name || !self.starts(">") {
                    return self.err(&format!("</{close}> closes <{name}>"));
                }
                self.i += 1;
                return Ok(Element {
                    name,
                    attrs,
                    children,
                });
            }
            if self.starts("<![CDATA[") {
                self.skip_until("]]>")?;
                continue;
            }
            if self.misc()? {
                continue;
            }
            if self.starts("<") {
                children.push(Node::Element(self.element()?));
            } else {
                children.push(Node::Text(self.text_until(b'<')?));
            }
        }
    }

    fn document(mut self) -> Result<Element, String> {
        loop {
            self.skip_ws();
            if !self.misc()? {
                break;
            }
        }
        let root = self.element()?;
        loop {
            self.skip_ws();
            if !self.misc()? {
                break;
            }
        }
        if self.i != self.s.len() {
            return self.err("content after the root element");
        }
        Ok(root)
    }
}

fn parse(s: &str) -> Result<Element, String> {
    Parser {
        s: s.as_bytes(),
        i: 0,
    }
    .document()
}

impl Element {
    fn attr(&self, n: &str) -> Option<&str> {
        self.attrs
            .iter()
            .find(|(k, _)| k == n)
            .map(|(_, v)| v.as_str())
    }

    fn walk<'a>(&'a self, out: &mut Vec<&'a Element>) {
        out.push(self);
        for c in &self.children {
            if let Node::Element(e) = c {
                e.walk(out);
            }
        }
    }

    fn all(&self) -> Vec<&Element> {
        let mut v = Vec::new();
        self.walk(&mut v);
        v
    }

    fn text(&self) -> String {
        let mut s = String::new();
        for c in &self.children {
            match c {
                Node::Text(t) => s.push_str(t),
                Node::Element(e) => s.push_str(&e.text()),
            }
        }
        s
    }

    fn count(&self, name: &str) -> usize {
        self.all().iter().filter(|e| e.name == name).count()
    }
}

#[test]
fn checker_rejects_malformed_xml() {
    // The checker itself must be able to fail (common practice: test the
    // test's oracle).
    assert!(parse("<a><b></a></b>").is_err());
    assert!(parse("<a x=1/>").is_err());
    assert!(parse("<a x='1' x='2'/>").is_err());
    assert!(parse("<a>&nope;</a>").is_err());
    assert!(parse("<a></a><b/>").is_err());
    assert!(parse("<a>").is_err());
    assert!(parse("<a x=\"<\"/>").is_err());
    assert!(parse("<?xml version=\"1.0\"?><a b=\"&amp;\">t &#x41; <!-- c --></a>").is_ok());
}

#[test]
fn demo_writes_a_well_formed_report_with_both_charts() {
    let dir: PathBuf =
        std::env::temp_dir().join(format!("plumbfit-demo-test-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_plumbfit-demo"))
        .current_dir(&dir)
        .output()
        .expect("run the demo binary");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    for needle in [
        "INVENTED",
        "lack of fit",
        "Mandel",
        "Durbin-Watson",
        "Shapiro-Wilk",
        "unknown samples",
        "Fieller",
        "detect",
        "quantify",
        "CAUTION",
        "licensed practice",
        "out/calibration-report.svg",
    ] {
        assert!(text.contains(needle), "report lacks {needle:?}:\n{text}");
    }
    let svg = std::fs::read_to_string(dir.join("out/calibration-report.svg")).unwrap();
    let root = parse(&svg).unwrap_or_else(|e| panic!("SVG not well-formed: {e}"));
    assert_eq!(root.name, "svg");
    assert_eq!(root.attr("xmlns"), Some("http://www.w3.org/2000/svg"));
    let groups: Vec<&Element> = root.all().into_iter().filter(|e| e.name == "g").collect();
    let find = |id: &str| {
        *groups
            .iter()
            .find(|g| g.attr("id") == Some(id))
            .unwrap_or_else(|| panic!("no group {id}"))
    };
    let cal = find("calibration-chart");
    let res = find("residual-chart");
    assert!(cal.text().contains("Calibration:"), "{}", cal.text());
    assert!(res.text().contains("Residuals:"), "{}", res.text());
    // Calibration chart: the band (one polygon), the fitted line (polylines)
    // and 24 readings drawn as crosses (two strokes each, among the grid
    // lines); residual chart: the band plus one triangle per reading.
    assert_eq!(cal.count("polygon"), 1);
    assert!(cal.count("polyline") >= 1);
    assert!(cal.count("line") >= 48);
    assert_eq!(res.count("polygon"), 1 + 24);
    // Both charts are nested drawings of their own.
    assert_eq!(cal.count("svg"), 1);
    assert_eq!(res.count("svg"), 1);
    // The caution is in the file as well as on the terminal.
    assert!(find("report-caution").text().contains("licensed practice"));
    assert!(find("report-header").text().contains("INVENTED DATA"));
    let _ = std::fs::remove_dir_all(&dir);
}
