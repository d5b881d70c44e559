//! The review note as one self-contained HTML page: the Markdown note rendered by
//! pulldown-cmark, with the SVG figures inlined after the field-solution section.

use pulldown_cmark::{Options, Parser, html};

/// Escapes text for HTML and SVG.
pub(crate) fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

/// Renders the page from the Markdown note and the figures (caption, SVG document).
pub fn render(title: &str, markdown_note: &str, figures: &[(String, String)]) -> String {
    let mut body = String::new();
    html::push_html(
        &mut body,
        Parser::new_ext(markdown_note, Options::ENABLE_TABLES),
    );
    let mut figs = String::from("<h2>Figures</h2>\n");
    for (k, (caption, svg)) in figures.iter().enumerate() {
        // The SVG documents carry their own XML declaration; inline only the <svg> element.
        let start = svg.find("<svg").unwrap_or(0);
        figs.push_str(&format!(
            "<figure id=\"figure-{}\">\n{}\n<figcaption>Figure {}. {}</figcaption>\n</figure>\n",
            k + 1,
            &svg[start..],
            k + 1,
            escape(caption)
        ));
    }
    let body = match body.find("<h2>4.") {
        Some(at) => format!("{}{}{}", &body[..at], figs, &body[at..]),
        None => format!("{body}{figs}"),
    };
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n<style>\nbody {{ font-family: sans-serif; max-width: 1100px; margin: 2em auto; line-height: 1.4; color: #111; }}\ntable {{ border-collapse: collapse; font-size: 0.85em; margin: 1em 0; }}\nth, td {{ border: 1px solid #999; padding: 2px 6px; }}\nth {{ background: #eee; }}\nfigure {{ margin: 1.5em 0; }}\nfigcaption {{ font-size: 0.9em; color: #333; }}\npre {{ background: #f4f4f4; padding: 1em; overflow-x: auto; }}\n@media print {{ body {{ max-width: none; }} }}\n</style>\n</head>\n<body>\n{}\n</body>\n</html>\n",
        escape(title),
        body
    )
}
