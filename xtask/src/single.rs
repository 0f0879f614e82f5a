//! `cargo xtask single-file`: the built page as one self-contained HTML file,
//! `dist-single/hysteron.html`, that works opened straight from disk (file://): for a bench PC with
//! no network, a USB stick or an e-mail attachment.
//!
//! From `dist/index.html`: each style sheet becomes a `<style>` element, the icon a `data:` URL, the
//! WebAssembly base64 text inside the loader script, which is the JS glue itself followed by the
//! start-up call (the browser refuses module and .wasm loads from file://, but not inline ones). The
//! preload hints, the web app manifest link and the old policy are dropped. A new
//! Content-Security-Policy allows nothing from anywhere (`default-src 'none'`) but the page's own
//! inline scripts and styles by their SHA-256 hashes, its WebAssembly and `data:`/`blob:` images.
//!
//! The compute worker (`hysteron-worker.js` and `hysteron-worker_bg.wasm`, fixed names) cannot be a
//! file either: its script, followed by its start with the WebAssembly as base64, goes into the
//! loader as text, which makes it a `blob:` URL in `globalThis.hysteronWorkerUrl` before the page
//! starts (`app/src/jobs.rs` starts workers from it), and the policy allows workers from `blob:`
//! only (`worker-src blob:`). A browser that still refuses gets sliced work on the page.

use crate::csp::{base64, sha256};
use std::path::Path;

/// The single file's folder (beside `dist/`) and name.
pub const OUT_DIR: &str = "dist-single";
/// The single file's name inside [`OUT_DIR`].
pub const OUT_FILE: &str = "hysteron.html";

/// Reads `<root>/dist`, writes `<root>/dist-single/hysteron.html`.
pub fn write_single_file(root: &Path) -> Result<(), String> {
    let dist = root.join("dist");
    let index = std::fs::read_to_string(dist.join("index.html"))
        .map_err(|e| format!("single-file: cannot read {}/index.html (build the page first): {e}", dist.display()))?;
    let read = |name: &str| -> Result<Vec<u8>, String> {
        let rel = name.trim_start_matches("./");
        if rel.contains("..") || rel.contains(':') {
            return Err(format!("single-file: {name:?} is not a file of the build"));
        }
        std::fs::read(dist.join(rel)).map_err(|e| format!("single-file: cannot read {}: {e}", dist.join(rel).display()))
    };
    let html = single_file(&index, &read)?;
    let out = root.join(OUT_DIR);
    std::fs::create_dir_all(&out).map_err(|e| format!("single-file: cannot make {}: {e}", out.display()))?;
    std::fs::write(out.join(OUT_FILE), &html).map_err(|e| format!("single-file: cannot write {}: {e}", out.join(OUT_FILE).display()))?;
    println!("[xtask] single-file: {} ({} bytes)", out.join(OUT_FILE).display(), html.len());
    Ok(())
}

/// The value of attribute `name` in the opening tag `tag` (quoted with `"`), if present.
fn attr<'a>(tag: &'a str, name: &str) -> Option<&'a str> {
    let needle = format!(" {name}=\"");
    let start = tag.find(&needle)? + needle.len();
    let end = tag[start..].find('"')? + start;
    Some(&tag[start..end])
}

/// `index.html` of the build turned into one file; `read` gives a built file's bytes by its href.
pub fn single_file(index: &str, read: &dyn Fn(&str) -> Result<Vec<u8>, String>) -> Result<String, String> {
    let mut out = String::with_capacity(index.len());
    let mut rest = index;
    let mut loaders = 0;
    loop {
        let next = [rest.find("<link "), rest.find("<meta "), rest.find("<script")].into_iter().flatten().min();
        let Some(i) = next else {
            out.push_str(rest);
            break;
        };
        out.push_str(&rest[..i]);
        let after = &rest[i..];
        let open_end = after.find('>').ok_or("single-file: unterminated tag in index.html")? + 1;
        let tag = &after[..open_end];
        if tag.starts_with("<script") {
            let close = after.find("</script>").ok_or("single-file: unterminated script in index.html")?;
            let body = &after[open_end..close];
            if attr(tag, "src").is_some() {
                return Err(format!("single-file: external script {tag} is not supported"));
            }
            if let Some(glue) = loader_glue(body) {
                let js = String::from_utf8(read(glue)?).map_err(|_| format!("single-file: {glue} is not UTF-8"))?;
                let js = inline_pieces(&js, read)?;
                let wasm = loader_wasm(body).ok_or("single-file: the loader names no .wasm")?;
                let bytes = read(wasm)?;
                out.push_str("<script type=\"module\">");
                if let (Ok(glue), Ok(wasm)) = (read(WORKER_GLUE), read(WORKER_WASM)) {
                    let glue = String::from_utf8(glue).map_err(|_| format!("single-file: {WORKER_GLUE} is not UTF-8"))?;
                    out.push_str(&inline_worker(&glue, &wasm));
                }
                out.push_str(&inline_loader(&js, &bytes)?);
                out.push_str("</script>");
                loaders += 1;
            } else {
                out.push_str(&after[..close + 9]);
            }
            rest = &after[close + 9..];
            continue;
        }
        rest = &after[open_end..];
        if tag.starts_with("<meta ") {
            if attr(tag, "http-equiv") != Some("Content-Security-Policy") {
                out.push_str(tag);
            }
            continue;
        }
        match attr(tag, "rel") {
            Some("stylesheet") => {
                let href = attr(tag, "href").ok_or("single-file: style sheet without href")?;
                let css = String::from_utf8(read(href)?).map_err(|_| format!("single-file: {href} is not UTF-8"))?;
                if css.contains("</style") {
                    return Err(format!("single-file: {href} contains </style"));
                }
                out.push_str("<style>");
                out.push_str(&css);
                out.push_str("</style>");
            }
            Some("icon") => {
                let href = attr(tag, "href").ok_or("single-file: icon without href")?;
                let kind = if href.ends_with(".svg") { "image/svg+xml" } else { "image/png" };
                out.push_str(&format!("<link rel=\"icon\" href=\"data:{kind};base64,{}\">", base64(&read(href)?)));
            }
            // Loads that cannot happen from disk, and would only be refused there.
            Some("modulepreload") | Some("preload") | Some("manifest") => {}
            _ => out.push_str(tag),
        }
    }
    if loaders != 1 {
        return Err(format!("single-file: expected one Trunk loader script in index.html, found {loaders}"));
    }
    with_policy(&out)
}

/// The compute worker's script and WebAssembly in the build (Trunk keeps these names).
const WORKER_GLUE: &str = "./hysteron-worker.js";
/// See [`WORKER_GLUE`].
const WORKER_WASM: &str = "./hysteron-worker_bg.wasm";

/// `text` as a double-quoted JavaScript string literal that cannot end the script element
/// (`<` is written `\x3c`).
fn js_string(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + text.len() / 8 + 2);
    out.push('"');
    for c in text.chars() {
        match c {
            '\\' => out.push_str("\\\\"),
            '"' => out.push_str("\\\""),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '<' => out.push_str("\\x3c"),
            '\u{2028}' => out.push_str("\\u2028"),
            '\u{2029}' => out.push_str("\\u2029"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

/// Start-up lines that make the worker's script (its glue, then its start with the WebAssembly from
/// base64; a failed start is rethrown so the page sees an error event) a `blob:` URL in
/// `globalThis.hysteronWorkerUrl`.
fn inline_worker(glue: &str, wasm: &[u8]) -> String {
    format!(
        "globalThis.hysteronWorkerUrl = URL.createObjectURL(new Blob([{}, \"\\nwasm_bindgen({{ module_or_path: Uint8Array.from(atob('{}'), (c) => c.charCodeAt(0)) }}).catch((e) => setTimeout(() => {{ throw e; }}));\\n\"], {{ type: 'text/javascript' }}));\n",
        js_string(glue),
        base64(wasm)
    )
}

/// The glue with its imports of the pieces' link module (`import * as importN from "./hysteron-split-….js"`,
/// one per imported function, in a page built in pieces, `split.rs`) replaced by that module's own
/// text: its `export const`s become plain constants gathered into one object that each `importN`
/// names, its import of the glue goes (the glue is the same script now), and each piece it fetches
/// comes from base64 text in the file instead (`hysteronPiece`, a `Response` of type
/// `application/wasm` for `instantiateStreaming`). A glue without such imports is returned as it is.
fn inline_pieces(glue: &str, read: &dyn Fn(&str) -> Result<Vec<u8>, String>) -> Result<String, String> {
    let mut path = None::<String>;
    let mut bindings = Vec::new();
    let mut kept = String::with_capacity(glue.len());
    for line in glue.split_inclusive('\n') {
        let Some(rest) = line.trim_end().strip_prefix("import * as ") else {
            kept.push_str(line);
            continue;
        };
        let (name, from) = rest.split_once(" from ").ok_or_else(|| format!("single-file: unexpected glue import {line:?}"))?;
        let from = from.trim_end_matches(';');
        let p = from.trim_matches(|c| c == '"' || c == '\'').to_string();
        if p.len() + 2 != from.len() || path.as_ref().is_some_and(|q| *q != p) {
            return Err(format!("single-file: the glue imports more than one module: {line:?}"));
        }
        path = Some(p);
        bindings.push(name.to_string());
    }
    let Some(path) = path else { return Ok(glue.to_string()) };
    let path = path.as_str();
    let link = String::from_utf8(read(path)?).map_err(|_| format!("single-file: {path} is not UTF-8"))?;
    let mut body = String::new();
    let mut exports = Vec::new();
    for l in link.lines() {
        if l.starts_with("import ") {
            if !l.contains("initSync") {
                return Err(format!("single-file: the link module imports more than the glue's initSync: {l:?}"));
            }
            continue;
        }
        if let Some(rest) = l.strip_prefix("export const ") {
            let export = rest.split_once(' ').map(|(n, _)| n).unwrap_or(rest);
            exports.push(export.to_string());
            body.push_str("const ");
            body.push_str(rest);
        } else if l.starts_with("export ") {
            return Err(format!("single-file: unexpected export in the link module: {l:?}"));
        } else {
            body.push_str(l);
        }
        body.push('\n');
    }
    // Each `fetch(new URL("./x.wasm", import.meta.url))` reads the piece from the file instead.
    let mut pieces = Vec::new();
    let mut out = String::new();
    let mut rest = body.as_str();
    const FETCH: &str = "fetch(new URL(\"";
    while let Some(i) = rest.find(FETCH) {
        out.push_str(&rest[..i]);
        let after = &rest[i + FETCH.len()..];
        let (piece, tail) = after.split_once("\", import.meta.url))").ok_or("single-file: unexpected piece fetch in the link module")?;
        out.push_str(&format!("hysteronPiece(\"{piece}\")"));
        pieces.push(piece.to_string());
        rest = tail;
    }
    out.push_str(rest);
    if link.contains("</script") {
        return Err("single-file: the link module contains </script".into());
    }
    let mut table = String::from("const hysteronPieces = {\n");
    for p in &pieces {
        table.push_str(&format!("  {}: '{}',\n", js_string(p), base64(&read(p)?)));
    }
    table.push_str("};\nfunction hysteronPiece(name) {\n  const bytes = Uint8Array.from(atob(hysteronPieces[name]), (c) => c.charCodeAt(0));\n  return Promise.resolve(new Response(bytes, { headers: { 'Content-Type': 'application/wasm' } }));\n}\n");
    let mut names = format!("const hysteronSplit = {{ {} }};\n", exports.join(", "));
    for b in &bindings {
        names.push_str(&format!("const {b} = hysteronSplit;\n"));
    }
    Ok(format!("{table}{out}{names}{kept}"))
}

/// The glue module the Trunk loader imports (`import init, * as bindings from './x.js';`).
pub fn loader_glue(body: &str) -> Option<&str> {
    let i = body.find("import init")?;
    let from = body[i..].find("from '")? + i + 6;
    let end = body[from..].find('\'')? + from;
    Some(&body[from..end])
}

/// The .wasm the Trunk loader passes to `init`.
pub fn loader_wasm(body: &str) -> Option<&str> {
    let i = body.find("module_or_path: '")? + 17;
    let end = body[i..].find('\'')? + i;
    Some(&body[i..end])
}

/// The glue module's text followed by the start-up: the WebAssembly decoded from base64 and handed to
/// the glue's `__wbg_init` (which instantiates bytes as it would a fetched file). The names added are
/// `hysteron…` ones: the glue's own top level already declares `wasm`.
fn inline_loader(glue: &str, wasm: &[u8]) -> Result<String, String> {
    if !glue.contains("__wbg_init") {
        return Err("single-file: the JS glue has no __wbg_init (wasm-bindgen changed?)".into());
    }
    if glue.contains("</script") {
        return Err("single-file: the JS glue contains </script".into());
    }
    if glue.lines().any(|l| l.trim_start().starts_with("import ")) {
        return Err("single-file: the JS glue imports other modules; inlining them is not supported".into());
    }
    Ok(format!(
        "{glue}\nconst hysteronWasm = Uint8Array.from(atob('{}'), (c) => c.charCodeAt(0));\n\
         const hysteronExports = await __wbg_init({{ module_or_path: hysteronWasm }});\n\
         dispatchEvent(new CustomEvent('TrunkApplicationStarted', {{ detail: {{ wasm: hysteronExports }} }}));\n",
        base64(wasm)
    ))
}

/// Hashes of the inline elements named `element` (`script` or `style`), as CSP sources.
fn hashes(html: &str, element: &str) -> Result<Vec<String>, String> {
    let (open, close) = (format!("<{element}"), format!("</{element}>"));
    let mut out = Vec::new();
    let mut rest = html;
    while let Some(i) = rest.find(&open) {
        let after = &rest[i..];
        let open_end = after.find('>').ok_or("single-file: unterminated tag")? + 1;
        let end = after.find(&close).ok_or_else(|| format!("single-file: unterminated {element}"))?;
        out.push(format!("'sha256-{}'", base64(&sha256(&after.as_bytes()[open_end..end]))));
        rest = &after[end + close.len()..];
    }
    Ok(out)
}

/// The html with its policy inserted right after `<head>`: nothing from anywhere but the hashed
/// inline scripts and styles, the WebAssembly they start, workers from `blob:` URLs, and
/// `data:`/`blob:` images.
fn with_policy(html: &str) -> Result<String, String> {
    let scripts = hashes(html, "script")?.join(" ");
    let styles = hashes(html, "style")?.join(" ");
    let policy = format!(
        "default-src 'none'; script-src 'wasm-unsafe-eval' {scripts}; style-src {styles}; worker-src blob:; img-src data: blob:; object-src 'none'; base-uri 'none'; form-action 'none'"
    );
    let head = html.find("<head>").ok_or("single-file: no <head> in index.html")? + 6;
    Ok(format!("{}\n  <meta http-equiv=\"Content-Security-Policy\" content=\"{policy}\">{}", &html[..head], &html[head..]))
}

#[cfg(test)]
mod tests {
    use super::*;

    const INDEX: &str = "<!DOCTYPE html>\n<html><head>\n  <meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'self'\">\n  <meta charset=\"utf-8\">\n  <link rel=\"stylesheet\" href=\"./style-1.css\" integrity=\"sha384-x\"/>\n  <link rel=\"icon\" href=\"./icon-2.svg\" integrity=\"sha384-y\"/>\n  <link rel=\"manifest\" href=\"manifest.webmanifest\">\n<script type=\"module\">\nimport init, * as bindings from './app-3.js';\nconst wasm = await init({ module_or_path: './app-3_bg.wasm' });\n</script>\n<link rel=\"modulepreload\" href=\"./app-3.js\"><link rel=\"preload\" href=\"./app-3_bg.wasm\" as=\"fetch\"></head>\n<body><script>if (1) {}</script></body></html>";

    fn read(name: &str) -> Result<Vec<u8>, String> {
        Ok(match name {
            "./style-1.css" => b"body{color:red}".to_vec(),
            "./icon-2.svg" => b"<svg/>".to_vec(),
            "./app-3.js" => b"async function __wbg_init(m) {}\nexport { __wbg_init as default }".to_vec(),
            "./app-3_bg.wasm" => b"\0asm\x01\0\0\0".to_vec(),
            other => return Err(format!("unexpected read of {other}")),
        })
    }

    #[test]
    fn every_file_is_inlined_and_no_load_remains() {
        let out = single_file(INDEX, &read).unwrap();
        assert!(out.contains("<style>body{color:red}</style>"), "{out}");
        assert!(out.contains(&format!("href=\"data:image/svg+xml;base64,{}\"", base64(b"<svg/>"))), "{out}");
        assert!(out.contains(&format!("atob('{}')", base64(b"\0asm\x01\0\0\0"))), "{out}");
        assert!(out.contains("export { __wbg_init as default }"), "{out}");
        for gone in ["href=\"./", "manifest", "preload", "import init", "default-src 'self'", "integrity="] {
            assert!(!out.contains(gone), "{gone} left in {out}");
        }
        assert!(out.contains("<script>if (1) {}</script>"), "other inline scripts stay: {out}");
    }

    #[test]
    fn policy_hashes_each_inline_script_and_style_and_allows_nothing_else() {
        let out = single_file(INDEX, &read).unwrap();
        assert!(out.starts_with("<!DOCTYPE html>\n<html><head>\n  <meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "));
        assert_eq!(out.matches("Content-Security-Policy").count(), 1);
        assert!(out.contains(&format!("'sha256-{}'", base64(&sha256(b"if (1) {}")))));
        assert!(out.contains(&format!("style-src 'sha256-{}';", base64(&sha256(b"body{color:red}")))));
        assert_eq!(out.matches("'sha256-").count(), 3, "two scripts and one style: {out}");
        assert!(!out.contains("'unsafe-inline'") && !out.contains("'self'"));
    }

    #[test]
    fn worker_is_inlined_as_a_blob_script_when_built() {
        let with_worker = |n: &str| match n {
            "./hysteron-worker.js" => Ok(b"let wasm_bindgen = 1; // \"</script>\"\n".to_vec()),
            "./hysteron-worker_bg.wasm" => Ok(b"\0asm\x02\0\0\0".to_vec()),
            other => read(other),
        };
        let out = single_file(INDEX, &with_worker).unwrap();
        assert!(out.contains("globalThis.hysteronWorkerUrl = URL.createObjectURL(new Blob([\"let wasm_bindgen = 1; // \\\"\\x3c/script>\\\"\\n\""), "{out}");
        assert!(out.contains(&format!("atob('{}')", base64(b"\0asm\x02\0\0\0"))), "{out}");
        assert!(out.contains("worker-src blob:;"), "{out}");
        assert_eq!(out.matches("</script>").count(), 2, "the worker's text cannot end a script: {out}");
        // Without worker files the page is built alone (studies then run on the page).
        assert!(!single_file(INDEX, &read).unwrap().contains("hysteronWorkerUrl"));
    }

    #[test]
    fn pieces_and_their_link_module_are_inlined() {
        let split = |n: &str| match n {
            "./app-3.js" => Ok(b"import * as import1 from \"./hysteron-split-9.js\"\nimport * as import2 from \"./hysteron-split-9.js\"\nasync function __wbg_init(m) {}\nfunction initSync(m) {}\nexport { __wbg_init as default }".to_vec()),
            "./hysteron-split-9.js" => Ok(b"import { initSync } from \"./app-3.js\";\nfunction makeLoad(f) { return f; }\nexport const __wasm_split_load_a = makeLoad(() => {\n    const src = fetch(new URL(\"./hysteron-split_a-9.wasm\", import.meta.url));\n});".to_vec()),
            "./hysteron-split_a-9.wasm" => Ok(b"\0asm\x01\0\0\x09".to_vec()),
            other => read(other),
        };
        let out = single_file(INDEX, &split).unwrap();
        for gone in ["import ", "export const", "import.meta.url", "hysteron-split-9.js"] {
            assert!(!out.contains(gone), "{gone} left in {out}");
        }
        assert!(out.contains("const __wasm_split_load_a = makeLoad("), "{out}");
        assert!(out.contains("const hysteronSplit = { __wasm_split_load_a };\nconst import1 = hysteronSplit;\nconst import2 = hysteronSplit;\n"), "{out}");
        assert!(out.contains("const src = hysteronPiece(\"./hysteron-split_a-9.wasm\");"), "{out}");
        assert!(out.contains(&format!("\"./hysteron-split_a-9.wasm\": '{}'", base64(b"\0asm\x01\0\0\x09"))), "{out}");
        let other_import = |n: &str| match n {
            "./hysteron-split-9.js" => Ok(b"import { x } from \"./elsewhere.js\";".to_vec()),
            other => split(other),
        };
        assert!(single_file(INDEX, &other_import).unwrap_err().contains("more than the glue's initSync"));
    }

    #[test]
    fn missing_loader_or_file_is_an_error() {
        assert!(single_file("<html><head></head><body></body></html>", &read).unwrap_err().contains("loader"));
        let no_css = |n: &str| if n.ends_with(".css") { Err("gone".to_string()) } else { read(n) };
        assert_eq!(single_file(INDEX, &no_css).unwrap_err(), "gone");
    }
}
