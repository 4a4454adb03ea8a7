//! `hoverline report`: the page is one self-contained HTML file. It is parsed with a real HTML5
//! parser (html5ever through the `scraper` crate) and checked for every section in order,
//! well-formed inline SVG, and no reference to anything outside the output folder; the
//! verdict on stdout with `--json` is data only and matches `report.json`; bad input exits 2.

use std::path::{Path, PathBuf};
use std::process::Command;

use hoverline::output::report::SECTION_IDS;
use scraper::{Html, Selector};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn temp_dir(tag: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("hoverline-report-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    d
}

fn sel(s: &str) -> Selector {
    Selector::parse(s).expect("a valid selector")
}

// ---------------------------------------------------------------------------------------
// A minimal XML 1.0 well-formedness check (elements, attributes, character and entity
// references, comments, CDATA, processing instructions). No DTD: only the five predefined
// entities are known, as in a standalone document.
// Source: W3C, Extensible Markup Language (XML) 1.0, Fifth Edition, §2.1 (well-formed
// documents), §2.8 (document), §3.1 (start-tags, end-tags, unique attribute names),
// §4.1 (character and entity references), §4.6 (predefined entities).

fn name_start(c: char) -> bool {
    c.is_alphabetic() || c == '_' || c == ':'
}

fn name_char(c: char) -> bool {
    name_start(c) || c.is_ascii_digit() || c == '-' || c == '.' || !c.is_ascii()
}

/// Check the references in character data or an attribute value.
fn check_refs(s: &str) -> Result<(), String> {
    let mut rest = s;
    while let Some(k) = rest.find('&') {
        let after = &rest[k + 1..];
        let end = after.find(';').ok_or_else(|| {
            format!(
                "'&' without ';' near {:?}",
                &rest[k..(k + 12).min(rest.len())]
            )
        })?;
        let r = &after[..end];
        let ok = match r.strip_prefix('#') {
            Some(n) => match n.strip_prefix('x') {
                Some(h) => {
                    !h.is_empty()
                        && u32::from_str_radix(h, 16)
                            .ok()
                            .and_then(char::from_u32)
                            .is_some()
                }
                None => !n.is_empty() && n.parse::<u32>().ok().and_then(char::from_u32).is_some(),
            },
            None => matches!(r, "lt" | "gt" | "amp" | "quot" | "apos"),
        };
        if !ok {
            return Err(format!("unknown reference &{r};"));
        }
        rest = &after[end + 1..];
    }
    Ok(())
}

/// Is `doc` a well-formed XML document (one root element)?
fn xml_well_formed(doc: &str) -> Result<(), String> {
    let b = doc;
    let mut i = 0usize;
    let mut stack: Vec<String> = Vec::new();
    let mut roots = 0usize;
    let n = b.len();
    while i < n {
        let rest = &b[i..];
        if let Some(r) = rest.strip_prefix("<!--") {
            let e = r.find("-->").ok_or("unterminated comment")?;
            if r[..e].contains("--") {
                return Err("'--' inside a comment".into());
            }
            i += 4 + e + 3;
        } else if let Some(r) = rest.strip_prefix("<![CDATA[") {
            if stack.is_empty() {
                return Err("CDATA outside the root element".into());
            }
            let e = r.find("]]>").ok_or("unterminated CDATA section")?;
            i += 9 + e + 3;
        } else if let Some(r) = rest.strip_prefix("<?") {
            let e = r.find("?>").ok_or("unterminated processing instruction")?;
            i += 2 + e + 2;
        } else if rest.starts_with("<!") {
            return Err("a DTD or declaration is not expected here".into());
        } else if let Some(r) = rest.strip_prefix("</") {
            let e = r.find('>').ok_or("unterminated end tag")?;
            let name = r[..e].trim_end();
            let open = stack
                .pop()
                .ok_or_else(|| format!("end tag </{name}> without a start tag"))?;
            if open != name {
                return Err(format!("end tag </{name}> closes <{open}>"));
            }
            i += 2 + e + 1;
        } else if let Some(r) = rest.strip_prefix('<') {
            // Start tag: name, attributes, '>' or '/>'.
            let mut chars = r.char_indices().peekable();
            let mut name_end = 0;
            match chars.peek() {
                Some(&(_, c)) if name_start(c) => {}
                _ => {
                    return Err(format!(
                        "'<' not followed by a name near {:?}",
                        &rest[..rest.len().min(20)]
                    ))
                }
            }
            while let Some(&(k, c)) = chars.peek() {
                if name_char(c) {
                    name_end = k + c.len_utf8();
                    chars.next();
                } else {
                    break;
                }
            }
            let name = r[..name_end].to_string();
            let mut attrs: Vec<String> = Vec::new();
            let mut j = name_end;
            let closed_empty;
            loop {
                let t = &r[j..];
                let ws = t.len() - t.trim_start().len();
                let t2 = t.trim_start();
                if let Some(_x) = t2.strip_prefix("/>") {
                    j += ws + 2;
                    closed_empty = true;
                    break;
                }
                if t2.starts_with('>') {
                    j += ws + 1;
                    closed_empty = false;
                    break;
                }
                if t2.is_empty() {
                    return Err(format!("unterminated start tag <{name}"));
                }
                if ws == 0 {
                    return Err(format!(
                        "attributes of <{name}> not separated by white space"
                    ));
                }
                // Attribute name.
                let an_len = t2
                    .char_indices()
                    .find(|&(_, c)| !name_char(c))
                    .map_or(t2.len(), |(k, _)| k);
                if an_len == 0 || !t2.chars().next().is_some_and(name_start) {
                    return Err(format!(
                        "bad attribute in <{name}> near {:?}",
                        &t2[..t2.len().min(20)]
                    ));
                }
                let an = &t2[..an_len];
                if attrs.iter().any(|a| a == an) {
                    return Err(format!("attribute {an} repeated in <{name}>"));
                }
                attrs.push(an.to_string());
                let after = t2[an_len..].trim_start();
                let after = after
                    .strip_prefix('=')
                    .ok_or_else(|| format!("attribute {an} of <{name}> has no value"))?
                    .trim_start();
                let q = after.chars().next().ok_or("unterminated attribute")?;
                if q != '"' && q != '\'' {
                    return Err(format!("attribute {an} of <{name}> is not quoted"));
                }
                let body = &after[1..];
                let e = body.find(q).ok_or("unterminated attribute value")?;
                let v = &body[..e];
                if v.contains('<') {
                    return Err(format!("'<' in the value of {an}"));
                }
                check_refs(v)?;
                // Advance j past the value's closing quote.
                let consumed = t.len() - body[e + 1..].len();
                j += consumed;
            }
            if stack.is_empty() {
                roots += 1;
                if roots > 1 {
                    return Err("more than one root element".into());
                }
            }
            if !closed_empty {
                stack.push(name);
            }
            i += 1 + j;
        } else {
            // Character data up to the next '<'.
            let e = rest.find('<').unwrap_or(rest.len());
            let text = &rest[..e];
            if stack.is_empty() && !text.trim().is_empty() {
                return Err("text outside the root element".into());
            }
            if text.contains("]]>") {
                return Err("']]>' in character data".into());
            }
            check_refs(text)?;
            i += e;
        }
    }
    if let Some(open) = stack.pop() {
        return Err(format!("<{open}> is never closed"));
    }
    if roots == 0 {
        return Err("no root element".into());
    }
    Ok(())
}

#[test]
fn the_xml_check_accepts_good_and_refuses_broken_documents() {
    // Source: W3C XML 1.0 (Fifth Edition) §2.1, §3.1, §4.1, §4.6; each bad case breaks one rule.
    let good = "<?xml version=\"1.0\"?>\n<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox='0 0 1 1'>\
<!-- c --><g><text x=\"1\">a &amp; b &lt; c &#39;&#x41;&apos;</text><rect/></g><![CDATA[x < y]]></svg>\n";
    assert_eq!(xml_well_formed(good), Ok(()));
    for bad in [
        "<svg><g></svg>",
        "<svg a=1/>",
        "<svg a=\"1\" a=\"2\"/>",
        "<svg>&nbsp;</svg>",
        "<svg>a & b</svg>",
        "<svg><text>a < b</text></svg>",
        "<svg/><svg/>",
        "<svg>",
        "</svg>",
        "<svg a=\"<\"/>",
        "<svg a=\"1\"b=\"2\"/>",
        "text<svg/>",
        "<svg><!-- a -- b --></svg>",
    ] {
        assert!(xml_well_formed(bad).is_err(), "accepted {bad:?}");
    }
}

/// Raw text of every `<svg ...>...</svg>` element in the page, outermost only.
fn raw_svgs(page: &str) -> Vec<&str> {
    let mut out = Vec::new();
    let mut i = 0;
    while let Some(k) = page[i..].find("<svg") {
        let start = i + k;
        let mut depth = 0usize;
        let mut j = start;
        loop {
            let next_open = page[j..].find("<svg").map(|x| j + x);
            let next_close = page[j..].find("</svg>").map(|x| j + x);
            match (next_open, next_close) {
                (Some(o), Some(c)) if o < c => {
                    depth += 1;
                    j = o + 4;
                }
                (_, Some(c)) => {
                    depth -= 1;
                    j = c + 6;
                    if depth == 0 {
                        break;
                    }
                }
                _ => panic!("an <svg> element is never closed"),
            }
        }
        out.push(&page[start..j]);
        i = j;
    }
    out
}

/// Does a link target leave the output folder's own files?
fn is_external(target: &str) -> bool {
    let t = target.trim().to_ascii_lowercase();
    t.starts_with("//") || t.contains(':')
}

fn check_page(dir: &Path, page: &str) {
    let doc = Html::parse_document(page);
    assert!(doc.errors.is_empty(), "HTML parse errors: {:?}", doc.errors);

    // Every section, in order, with its heading.
    let ids: Vec<String> = doc
        .select(&sel("body > header[id], main > section[id]"))
        .filter_map(|e| e.value().attr("id").map(str::to_string))
        .collect();
    assert_eq!(
        ids,
        SECTION_IDS.to_vec(),
        "sections missing or out of order"
    );
    for id in &SECTION_IDS[1..] {
        let h = doc.select(&sel(&format!("section#{id} > h2"))).count();
        assert_eq!(h, 1, "section {id} has no heading");
    }
    assert_eq!(doc.select(&sel("header#headline h1")).count(), 1);

    // Inline SVG: as many raw elements as the parser sees, each well-formed XML.
    let svgs = raw_svgs(page);
    assert_eq!(svgs.len(), doc.select(&sel("svg")).count());
    assert!(svgs.len() >= 6, "only {} figures inlined", svgs.len());
    for (k, s) in svgs.iter().enumerate() {
        if let Err(e) = xml_well_formed(s) {
            panic!("figure {k} is not well-formed XML: {e}");
        }
    }
    // Every figure of a section sits in a figure element with a caption.
    assert_eq!(doc.select(&sel("figure.chart > svg")).count(), svgs.len());
    assert_eq!(
        doc.select(&sel("figure.chart > figcaption")).count(),
        svgs.len()
    );

    // No external resource: no scripts, stylesheet links, frames, images or objects; every
    // src/href points at the page itself or a file beside it; no @import or url() in styles.
    for bad in [
        "script", "link", "iframe", "img", "object", "embed", "image", "use", "base",
    ] {
        assert_eq!(doc.select(&sel(bad)).count(), 0, "<{bad}> found");
    }
    for e in doc.select(&sel("*")) {
        for (name, value) in e.value().attrs() {
            let n = name.to_ascii_lowercase();
            if matches!(
                n.as_str(),
                "src" | "href" | "xlink:href" | "srcset" | "action" | "data" | "poster"
            ) {
                assert!(
                    !is_external(value),
                    "<{} {name}={value:?}> leaves the page",
                    e.value().name()
                );
                if let Some(id) = value.strip_prefix('#') {
                    assert_eq!(
                        doc.select(&sel(&format!("[id=\"{id}\"]"))).count(),
                        1,
                        "link to missing #{id}"
                    );
                } else {
                    assert!(
                        dir.join(value).is_file(),
                        "link to {value} but no such file beside the report"
                    );
                }
            }
            if n == "style" || n.starts_with("on") {
                assert!(!n.starts_with("on"), "event handler {name}");
                assert!(
                    !value.contains("url(") && !value.contains("@import"),
                    "style attribute loads {value}"
                );
            }
        }
    }
    let styles: String = doc.select(&sel("style")).flat_map(|s| s.text()).collect();
    assert!(!styles.is_empty());
    assert!(
        !styles.contains("@import") && !styles.contains("url("),
        "the stylesheet loads something"
    );
    // The only absolute URL in the page is the SVG namespace name, which is not fetched.
    let ns = "http://www.w3.org/2000/svg";
    let stripped = page.replace(&format!("xmlns=\"{ns}\""), "");
    assert!(
        !stripped.contains("http:") && !stripped.contains("https:"),
        "an absolute URL in the page"
    );

    // The caution and the tool version are on the page.
    let text: String = doc.root_element().text().collect();
    assert!(text.contains("not a flight clearance"));
    assert!(text.contains(&format!("hoverline {}", env!("CARGO_PKG_VERSION"))));
    // The trim table folds away and links its CSV.
    assert_eq!(
        doc.select(&sel("section#trim-table details > summary"))
            .count(),
        1
    );
    assert!(
        doc.select(&sel("section#trim-table a[href=\"trim.csv\"]"))
            .count()
            >= 1
    );
}

#[test]
fn report_of_a_demo_scenario_is_self_contained_and_complete() {
    let dir = temp_dir("surveyor");
    let out = Command::new(env!("CARGO_BIN_EXE_hoverline"))
        .arg("report")
        .arg(root().join("scenarios/surveyor-transition.toml"))
        .arg("--out")
        .arg(&dir)
        .arg("--json")
        .env("NO_COLOR", "1")
        .env("SOURCE_DATE_EPOCH", "1709164800")
        .output()
        .expect("hoverline runs");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(0), "stderr: {stderr}");

    // stdout is the verdict as JSON and nothing else, the same as report.json.
    let stdout = String::from_utf8(out.stdout).expect("UTF-8 stdout");
    let v: serde_json::Value = serde_json::from_str(&stdout).expect("stdout is one JSON document");
    let file: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("report.json")).unwrap()).unwrap();
    assert_eq!(v, file);
    assert_eq!(v["date_utc"], "2024-02-29");
    assert!(!stdout.contains('\u{1b}'), "colour codes under NO_COLOR");
    let findings = v["findings"].as_array().expect("findings");
    assert!(!findings.is_empty());
    assert_eq!(
        v["not_available"].as_array().map(Vec::len),
        Some(0),
        "{}",
        v["not_available"]
    );

    let page = std::fs::read_to_string(dir.join("report.html")).expect("report.html written");
    check_page(&dir, &page);
    // The checks can fail: each broken copy of the page is refused.
    let broken = [
        page.replacen(
            "<main>",
            "<main><img src=\"https://example.org/a.png\" alt=\"\">",
            1,
        ),
        page.replacen(
            "</head>",
            "<link rel=\"stylesheet\" href=\"https://example.org/a.css\"></head>",
            1,
        ),
        page.replacen("<style>", "<style>@import 'x.css';", 1),
        page.replacen("</text>", "", 1),
        page.replacen("<section id=\"modes\">", "<section id=\"eigen\">", 1),
        page.replacen("href=\"trim.csv\"", "href=\"missing.csv\"", 1),
    ];
    for (k, b) in broken.iter().enumerate() {
        assert_ne!(b, &page, "broken copy {k} did not change the page");
        let refused = std::panic::catch_unwind(|| check_page(&dir, b)).is_err();
        assert!(refused, "broken copy {k} passed the checks");
    }

    // One verdict line per finding.
    let doc = Html::parse_document(&page);
    assert_eq!(
        doc.select(&sel("section#verdict li")).count(),
        findings.len()
    );
    for k in [
        "trim.csv",
        "sweep.json",
        "corridor.csv",
        "schedule.toml",
        "flight.csv",
        "back-transition/flight.json",
    ] {
        assert!(dir.join(k).is_file(), "{k} not written");
    }
    // Both directions are flown and shown, each with its outcome (common practice, no
    // source: a transition is cleared both ways).
    let flight: String = doc
        .select(&sel("section#flight"))
        .flat_map(|e| e.text())
        .collect();
    assert!(flight.contains("Back-transition (cruise to hover)"));
    assert!(flight.matches("outcome").count() >= 2, "{flight}");
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn report_refuses_bad_input_with_status_2() {
    let dir = temp_dir("bad");
    let run = |args: &[&str]| {
        Command::new(env!("CARGO_BIN_EXE_hoverline"))
            .args(args)
            .output()
            .expect("hoverline runs")
    };
    let missing = run(&[
        "report",
        "no/such/scenario.toml",
        "--out",
        dir.to_str().unwrap(),
    ]);
    assert_eq!(missing.status.code(), Some(2));
    assert!(missing.stdout.is_empty());
    let scenario = root().join("scenarios/surveyor-transition.toml");
    let bad_schedule = run(&[
        "report",
        scenario.to_str().unwrap(),
        "--schedule",
        "no/such/schedule.toml",
        "--out",
        dir.to_str().unwrap(),
    ]);
    assert_eq!(bad_schedule.status.code(), Some(2));
    assert_eq!(run(&["report"]).status.code(), Some(2));
    assert!(!dir.join("report.html").exists());
}

#[test]
fn streamed_json_is_the_document_serde_builds_in_memory() {
    // Common practice, no source: writing a JSON document straight into the file must give
    // the very bytes of the in-memory pretty serialisation.
    let dir = std::env::temp_dir().join(format!("hoverline-json-{}", std::process::id()));
    let p = dir.join("a.json");
    let v = vec![(1.5, "x".to_string()), (2.0, "y\"z".to_string())];
    hoverline::output::files::write_json(&p, &v).unwrap();
    assert_eq!(
        std::fs::read_to_string(&p).unwrap(),
        serde_json::to_string_pretty(&v).unwrap()
    );
    std::fs::remove_dir_all(&dir).unwrap();
}
