//! `index.html`: the text report and every picture of a folder on one page, so a browser
//! shows the whole report at a glance. Plain HTML, no scripts.

use std::path::{Path, PathBuf};

use super::style::PictureError;

/// A heading and the pictures under it.
#[derive(Debug, Clone, PartialEq)]
pub struct IndexSection {
    pub heading: String,
    pub files: Vec<PathBuf>,
}

fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Writes `dir/index.html` and returns its path.
pub fn write_index(
    dir: &Path,
    title: &str,
    report_text: &str,
    sections: &[IndexSection],
) -> Result<PathBuf, PictureError> {
    let mut html = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <title>{t}</title>\n<style>body {{ font-family: sans-serif; margin: 2em; }} \
         img {{ max-width: 100%; border: 1px solid #ccc; margin: 0.5em 0; }} \
         pre {{ background: #f6f6f6; padding: 1em; overflow-x: auto; }}</style>\n</head>\n\
         <body>\n<h1>{t}</h1>\n<pre>{r}</pre>\n",
        t = escape(title),
        r = escape(report_text)
    );
    for section in sections {
        html.push_str(&format!("<h2>{}</h2>\n", escape(&section.heading)));
        for file in &section.files {
            let name = file
                .file_name()
                .map(|n| n.to_string_lossy().to_string())
                .unwrap_or_default();
            html.push_str(&format!(
                "<p><img src=\"{n}\" alt=\"{n}\"></p>\n",
                n = escape(&name)
            ));
        }
    }
    html.push_str("</body>\n</html>\n");
    let path = dir.join("index.html");
    std::fs::write(&path, html).map_err(|e| PictureError {
        file: path.clone(),
        why: e.to_string(),
    })?;
    Ok(path)
}
