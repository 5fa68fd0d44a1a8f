//! The run report must open offline with every image present: every `src`, `href` and
//! `srcset` value of `report.html` (any quoting) and every CSS `url(…)` is a relative path inside
//! the run folder to a non-empty file, and every PNG it references starts with the PNG
//! signature (W3C PNG specification, 3rd ed., §5.2: the bytes 137 80 78 71 13 10 26 10).

use std::path::{Component, Path};

/// The referenced values of `html`, entity-decoded, in page order.
pub fn references(html: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = html;
    while let Some(open) = rest.find('<') {
        let after = &rest[open + 1..];
        let close = after.find('>').unwrap_or(after.len());
        let tag = &after[..close];
        rest = &after[close..];
        if tag.starts_with('!') || tag.starts_with('/') {
            continue;
        }
        for (name, value) in attributes(tag) {
            match name.as_str() {
                "src" | "href" => out.push(decode(&value)),
                "srcset" => out.extend(
                    value.split(',').filter_map(|c| c.split_whitespace().next()).map(decode),
                ),
                "style" => out.extend(css_urls(&value)),
                _ => {}
            }
        }
    }
    // <style> blocks.
    let mut rest = html;
    while let Some(i) = rest.find("<style") {
        let end = rest[i..].find("</style>").map_or(rest.len(), |e| i + e);
        out.extend(css_urls(&rest[i..end]));
        rest = &rest[end..];
    }
    out
}

/// `name=value` pairs of a tag's text (after the element name), names lower-cased; values in
/// double quotes, single quotes or unquoted (HTML Living Standard, "attributes" in §13.1.2.3).
fn attributes(tag: &str) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut chars = tag.char_indices().peekable();
    // Skip the element name.
    while chars.peek().is_some_and(|(_, c)| !c.is_whitespace()) {
        chars.next();
    }
    loop {
        while chars.peek().is_some_and(|(_, c)| c.is_whitespace() || *c == '/') {
            chars.next();
        }
        let Some(&(start, _)) = chars.peek() else { break };
        while chars.peek().is_some_and(|(_, c)| !c.is_whitespace() && *c != '=') {
            chars.next();
        }
        let end = chars.peek().map_or(tag.len(), |(i, _)| *i);
        let name = tag[start..end].to_ascii_lowercase();
        while chars.peek().is_some_and(|(_, c)| c.is_whitespace()) {
            chars.next();
        }
        if chars.peek().is_some_and(|(_, c)| *c == '=') {
            chars.next();
            while chars.peek().is_some_and(|(_, c)| c.is_whitespace()) {
                chars.next();
            }
            let value = match chars.peek().copied() {
                Some((i, q @ ('"' | '\''))) => {
                    chars.next();
                    let mut end = tag.len();
                    for (j, c) in chars.by_ref() {
                        if c == q {
                            end = j;
                            break;
                        }
                    }
                    tag[i + 1..end].to_string()
                }
                Some((i, _)) => {
                    while chars.peek().is_some_and(|(_, c)| !c.is_whitespace()) {
                        chars.next();
                    }
                    let end = chars.peek().map_or(tag.len(), |(j, _)| *j);
                    tag[i..end].to_string()
                }
                None => String::new(),
            };
            out.push((name, value));
        } else if !name.is_empty() {
            out.push((name, String::new()));
        }
    }
    out
}

/// The targets of `url(…)` in CSS text.
fn css_urls(css: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = css;
    while let Some(i) = rest.find("url(") {
        rest = &rest[i + 4..];
        let end = rest.find(')').unwrap_or(rest.len());
        out.push(decode(rest[..end].trim().trim_matches(|c| c == '"' || c == '\'')));
        rest = &rest[end..];
    }
    out
}

/// The character references the report writer produces (&amp; &lt; &gt; &quot; &#39;).
fn decode(value: &str) -> String {
    value
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&#39;", "'")
        .replace("&amp;", "&")
}

/// Checks `run_dir/report.html` as the module doc says; returns the references it checked.
pub fn check_report_references(run_dir: &Path) -> Vec<String> {
    let html = std::fs::read_to_string(run_dir.join("report.html")).unwrap();
    let refs = references(&html);
    let mut problems = Vec::new();
    for r in &refs {
        let path = r.split('#').next().unwrap_or_default();
        if path.is_empty() {
            continue; // a link within the page
        }
        let lower = path.to_ascii_lowercase();
        if lower.contains("://") || lower.starts_with("//") || lower.starts_with("file:") {
            problems.push(format!("{r}: not a relative path (the page must work offline)"));
            continue;
        }
        let relative = Path::new(path);
        if relative.components().any(|c| !matches!(c, Component::Normal(_) | Component::CurDir)) {
            problems.push(format!("{r}: leaves the run folder"));
            continue;
        }
        let file = run_dir.join(relative);
        match std::fs::read(&file) {
            Err(e) => problems.push(format!("{r}: {e}")),
            Ok(bytes) if bytes.is_empty() => problems.push(format!("{r}: empty file")),
            Ok(bytes) => {
                if lower.ends_with(".png") && !bytes.starts_with(b"\x89PNG\r\n\x1a\n") {
                    problems.push(format!("{r}: not a PNG file"));
                }
            }
        }
    }
    assert!(problems.is_empty(), "report.html in {}:\n{}", run_dir.display(), problems.join("\n"));
    refs
}
