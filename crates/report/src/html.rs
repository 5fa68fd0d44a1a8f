//! A static, self-contained HTML page: inline CSS, relative links, no scripts, no external
//! resources, so it opens offline from any folder the run is copied to.

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::Path;

use crate::atomic::TempSibling;
use crate::ReportError;

/// One page: a title, a lead paragraph and sections in order.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct HtmlPage {
    /// Page title (also the `<title>`).
    pub title: String,
    /// A short paragraph under the title.
    pub lead: String,
    /// Sections, in order.
    pub sections: Vec<HtmlSection>,
}

/// A headed section of blocks.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct HtmlSection {
    /// Section heading.
    pub heading: String,
    /// Content blocks, in order.
    pub blocks: Vec<HtmlBlock>,
}

/// A piece of content. All text is escaped; the page holds no markup from its caller.
#[derive(Clone, Debug, PartialEq)]
pub enum HtmlBlock {
    /// A paragraph of text.
    Paragraph(String),
    /// A highlighted note (e.g. the caution that results are simulations).
    Note(String),
    /// A table: header cells and rows of text cells (numbers already formatted).
    Table {
        /// Header cells.
        columns: Vec<String>,
        /// Rows, each as long as `columns`.
        rows: Vec<Vec<String>>,
    },
    /// Images side by side, each with a caption; `src` is a path relative to the page.
    Figures(Vec<HtmlFigure>),
    /// Preformatted text (e.g. a config file).
    Preformatted(String),
    /// Links to files beside the page: (relative path, label).
    Links(Vec<(String, String)>),
}

/// An image with a caption.
#[derive(Clone, Debug, PartialEq)]
pub struct HtmlFigure {
    /// Path of the image relative to the page (forward slashes).
    pub src: String,
    /// Caption under the image (also its alt text).
    pub caption: String,
}

const STYLE: &str =
    "body{font-family:Georgia,'DejaVu Serif',serif;max-width:1200px;margin:2em auto;\
padding:0 1.2em;color:#1d1b26;background:#fbfaf6;line-height:1.45}\
h1{font-size:1.7em;border-bottom:3px double #6a5f8c;padding-bottom:.3em}\
h2{font-size:1.25em;color:#3c3466;margin-top:2em;border-left:6px solid #c9b458;padding-left:.5em}\
table{border-collapse:collapse;font-family:'DejaVu Sans Mono',monospace;font-size:.82em;\
margin:.6em 0;display:block;overflow-x:auto}\
th{background:#e9e4f4;text-align:left;position:sticky;top:0}\
th,td{border:1px solid #cfc8de;padding:.25em .5em;white-space:nowrap}\
tr:nth-child(even) td{background:#f3f0f9}\
.note{background:#fff4d6;border:1px solid #d8b64a;padding:.7em 1em;border-radius:4px}\
.figs{display:flex;flex-wrap:wrap;gap:1em}\
figure{margin:0;flex:1 1 320px;max-width:560px}figure img{width:100%;border:1px solid #cfc8de}\
figcaption{font-size:.85em;color:#4a4560}\
pre{background:#f1eee6;padding:.8em;overflow-x:auto;font-size:.8em}";

/// Escapes `&`, `<`, `>`, `"` and `'` for HTML text and attribute values.
pub fn escape_html(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// The page as an HTML5 document string.
pub fn render_html(page: &HtmlPage) -> String {
    let e = escape_html;
    let mut s = String::new();
    let _ = write!(
        s,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <title>{}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n<h1>{}</h1>\n<p>{}</p>\n",
        e(&page.title),
        e(&page.title),
        e(&page.lead)
    );
    for section in &page.sections {
        let _ = writeln!(s, "<section>\n<h2>{}</h2>", e(&section.heading));
        for block in &section.blocks {
            render_block(&mut s, block);
        }
        s.push_str("</section>\n");
    }
    s.push_str("</body>\n</html>\n");
    s
}

fn render_block(s: &mut String, block: &HtmlBlock) {
    let e = escape_html;
    match block {
        HtmlBlock::Paragraph(t) => {
            let _ = writeln!(s, "<p>{}</p>", e(t));
        }
        HtmlBlock::Note(t) => {
            let _ = writeln!(s, "<p class=\"note\">{}</p>", e(t));
        }
        HtmlBlock::Table { columns, rows } => {
            s.push_str("<table>\n<thead><tr>");
            for c in columns {
                let _ = write!(s, "<th>{}</th>", e(c));
            }
            s.push_str("</tr></thead>\n<tbody>\n");
            for row in rows {
                s.push_str("<tr>");
                for c in row {
                    let _ = write!(s, "<td>{}</td>", e(c));
                }
                s.push_str("</tr>\n");
            }
            s.push_str("</tbody>\n</table>\n");
        }
        HtmlBlock::Figures(figs) => {
            s.push_str("<div class=\"figs\">\n");
            for f in figs {
                let _ = writeln!(
                    s,
                    "<figure><a href=\"{0}\"><img src=\"{0}\" alt=\"{1}\"></a>\
                     <figcaption>{1}</figcaption></figure>",
                    e(&f.src),
                    e(&f.caption)
                );
            }
            s.push_str("</div>\n");
        }
        HtmlBlock::Preformatted(t) => {
            let _ = writeln!(s, "<pre>{}</pre>", e(t));
        }
        HtmlBlock::Links(links) => {
            s.push_str("<ul>\n");
            for (href, label) in links {
                let _ = writeln!(s, "<li><a href=\"{}\">{}</a></li>", e(href), e(label));
            }
            s.push_str("</ul>\n");
        }
    }
}

/// Writes the page to `path` (replacing any file there), atomically.
pub fn write_html(path: &Path, page: &HtmlPage) -> Result<(), ReportError> {
    write_text_file(path, &render_html(page))
}

/// Writes UTF-8 `text` to `path` (replacing any file there) under a temporary name renamed into
/// place at the end — for the page and its companion text files (JSON, CSV, TOML).
pub fn write_text_file(path: &Path, text: &str) -> Result<(), ReportError> {
    let temp = TempSibling::file(path)?;
    let mut file = std::fs::File::create(temp.path())
        .map_err(|e| ReportError::io(temp.path(), "creating", e))?;
    file.write_all(text.as_bytes()).map_err(|e| ReportError::io(temp.path(), "writing", e))?;
    file.sync_all().map_err(|e| ReportError::io(temp.path(), "flushing", e))?;
    drop(file);
    temp.commit()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn text_is_escaped_and_page_is_self_contained() {
        let page = HtmlPage {
            title: "a <b> & 'c'".into(),
            lead: "x".into(),
            sections: vec![HtmlSection {
                heading: "h".into(),
                blocks: vec![
                    HtmlBlock::Figures(vec![HtmlFigure {
                        src: "s/a.png".into(),
                        caption: "\"q\"".into(),
                    }]),
                    HtmlBlock::Table { columns: vec!["c".into()], rows: vec![vec!["<1>".into()]] },
                ],
            }],
        };
        let html = render_html(&page);
        assert!(html.contains("<h1>a &lt;b&gt; &amp; &#39;c&#39;</h1>"));
        assert!(html.contains("<td>&lt;1&gt;</td>"));
        assert!(html.contains("src=\"s/a.png\""));
        assert!(!html.contains("<script"));
        assert!(!html.contains("http"));
    }

    #[test]
    fn text_file_round_trip() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.json");
        write_text_file(&p, "{\"a\": 1}\n").unwrap();
        assert_eq!(std::fs::read_to_string(&p).unwrap(), "{\"a\": 1}\n");
    }
}
