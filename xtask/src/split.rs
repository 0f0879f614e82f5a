//! The page's module cut into pieces (a Trunk post-build hook, before `csp` and `offline`).
//!
//! Trunk has no step between cargo and wasm-bindgen, where a module must be cut: its wasm-bindgen
//! drops the relocations the cut needs. So, when the page's raw module (cargo's output, linked with
//! `--emit-relocs` by `app/build.rs` under `HYSTERON_SPLIT=1`) holds split points (Leptos `#[lazy]`
//! functions: the studies, the part list, the share section, the sheet), this step redoes Trunk's
//! work for the page from that raw module:
//! 1. `wasm_split_cli_support::transform` cuts it into the main module, one module per split point
//!    (and shared chunks), and a JS link module that fetches them on first call;
//! 2. the same wasm-bindgen and wasm-opt (`-Oz`, as `data-wasm-opt="z"`) Trunk uses make the page's
//!    glue and optimise every piece;
//! 3. the pieces are named with one hash of all of them (`hysteron-app-<h>.js`, `…_bg.wasm`,
//!    `hysteron-split-<h>.js`, `hysteron-<piece>-<h>.wasm`): a page never meets pieces of another build;
//! 4. Trunk's unsplit glue and module are removed and `index.html` points at the new ones (the loader
//!    script, the preload hints, their SHA-256 integrity).
//!
//! A raw module without split points (a plain `trunk build`) is left as Trunk built it.

use crate::csp::{base64, sha256};
use std::path::{Path, PathBuf};
use std::process::Command;

/// The import module wasm-split's placeholders use (`wasm_split_helpers`): its name in the raw module
/// means the module has split points.
const PLACEHOLDER: &[u8] = b"__wasm_split_placeholder__";
/// The JS link module's name before hashing (the import module the main module names).
const LINK: &str = "./hysteron-split.js";
/// The page glue's name before hashing (the module the link module imports `initSync` from).
const GLUE: &str = "./hysteron-app.js";
/// Trunk's name for the page (`data-bin`).
const PAGE: &str = "hysteron-app";

/// Runs the split step on `$TRUNK_STAGING_DIR` for the profile Trunk built (`$TRUNK_PROFILE`).
pub fn split_page(root: &Path) -> Result<(), String> {
    let staging = PathBuf::from(std::env::var("TRUNK_STAGING_DIR").map_err(|_| "split: run as a Trunk post_build hook (TRUNK_STAGING_DIR unset)".to_string())?);
    let profile = std::env::var("TRUNK_PROFILE").unwrap_or_else(|_| "release".into());
    let target = std::env::var("CARGO_TARGET_DIR").map(PathBuf::from).unwrap_or_else(|_| root.join("target"));
    let raw_path = target.join("wasm32-unknown-unknown").join(&profile).join(format!("{PAGE}.wasm"));
    let raw = std::fs::read(&raw_path).map_err(|e| format!("split: cannot read the page's raw module {}: {e}", raw_path.display()))?;
    if !raw.windows(PLACEHOLDER.len()).any(|w| w == PLACEHOLDER) {
        println!("[xtask] split: the page has no split points (built without HYSTERON_SPLIT=1): left as one module");
        return Ok(());
    }
    let work = target.join("hysteron-split");
    let _ = std::fs::remove_dir_all(&work);
    std::fs::create_dir_all(&work).map_err(|e| format!("split: cannot make {}: {e}", work.display()))?;
    let main_raw = work.join("main.wasm");
    let split = {
        let mut opts = wasm_split_cli_support::Options::new(&raw);
        opts.output_dir = &work;
        opts.main_out_path = &main_raw;
        opts.link_name = LINK;
        opts.main_module = GLUE;
        wasm_split_cli_support::transform(opts).map_err(|e| format!("split: wasm-split failed: {e:#}"))?
    };
    // wasm-bindgen on the main piece, as Trunk calls it, keeping the linker's exports: the pieces
    // import the function table (`__indirect_function_table`), which wasm-bindgen drops otherwise.
    let bindgen = work.join("bindgen");
    crate::run(Command::new("wasm-bindgen").arg("--target=web").arg(format!("--out-dir={}", bindgen.display())).arg(format!("--out-name={PAGE}")).arg("--no-typescript").arg("--keep-lld-exports").arg(&main_raw))?;
    let release = profile == "release";
    let main_wasm = bindgen.join(format!("{PAGE}_bg.wasm"));
    if release {
        let mut all = vec![main_wasm.clone()];
        all.extend(split.split_modules.iter().cloned());
        optimise_all(&all)?;
    }
    let mut pieces: Vec<(String, Vec<u8>)> = Vec::new();
    for path in &split.split_modules {
        let stem = path.file_stem().and_then(|s| s.to_str()).ok_or("split: a piece without a name")?.to_string();
        pieces.push((stem, read(path)?));
    }
    pieces.sort();
    let glue = String::from_utf8(read(&bindgen.join(format!("{PAGE}.js")))?).map_err(|_| "split: the glue is not UTF-8")?;
    let link = String::from_utf8(read(&work.join(LINK.trim_start_matches("./")))?).map_err(|_| "split: the link module is not UTF-8")?;
    let main_bytes = read(&main_wasm)?;
    let hash = build_hash(&main_bytes, &pieces, &glue, &link);
    let names = Names::new(&hash);
    let glue = rewrite_glue(&glue, &names)?;
    let link = rewrite_link(&link, &pieces, &names)?;

    // Trunk's unsplit page out, the pieces in.
    let index_path = staging.join("index.html");
    let index = std::fs::read_to_string(&index_path).map_err(|e| format!("split: cannot read {}: {e}", index_path.display()))?;
    let old_glue = crate::single::loader_glue(&index).ok_or("split: index.html has no Trunk loader")?.trim_start_matches("./").to_string();
    let old_wasm = crate::single::loader_wasm(&index).ok_or("split: the loader names no .wasm")?.trim_start_matches("./").to_string();
    let write = |name: &str, bytes: &[u8]| std::fs::write(staging.join(name), bytes).map_err(|e| format!("split: cannot write {name}: {e}"));
    write(&names.glue, glue.as_bytes())?;
    write(&names.main, &main_bytes)?;
    write(&names.link, link.as_bytes())?;
    for (stem, bytes) in &pieces {
        write(&names.piece(stem), bytes)?;
    }
    for old in [&old_glue, &old_wasm] {
        std::fs::remove_file(staging.join(old)).map_err(|e| format!("split: cannot remove Trunk's {old}: {e}"))?;
    }
    let index = repoint_index(&index, &old_glue, &names.glue, glue.as_bytes())?;
    let index = repoint_index(&index, &old_wasm, &names.main, &main_bytes)?;
    std::fs::write(&index_path, index).map_err(|e| format!("split: cannot write {}: {e}", index_path.display()))?;
    let total: usize = pieces.iter().map(|(_, b)| b.len()).sum();
    println!(
        "[xtask] split: main module {} bytes, {} pieces loaded on demand {} bytes ({})",
        main_bytes.len(),
        pieces.len(),
        total,
        pieces.iter().map(|(s, b)| format!("{s} {}", b.len())).collect::<Vec<_>>().join(", ")
    );
    Ok(())
}

fn read(path: &Path) -> Result<Vec<u8>, String> {
    std::fs::read(path).map_err(|e| format!("split: cannot read {}: {e}", path.display()))
}

/// wasm-opt `-Oz` in place (Trunk's `data-wasm-opt="z"` for the page) on every file, as many at a
/// time as the machine has cores.
fn optimise_all(paths: &[PathBuf]) -> Result<(), String> {
    let next = std::sync::atomic::AtomicUsize::new(0);
    let cores = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1);
    std::thread::scope(|scope| {
        let workers: Vec<_> = (0..cores)
            .map(|_| {
                scope.spawn(|| -> Result<(), String> {
                    while let Some(path) = paths.get(next.fetch_add(1, std::sync::atomic::Ordering::Relaxed)) {
                        let out = path.with_extension("opt.wasm");
                        let done = Command::new("wasm-opt").arg(format!("--output={}", out.display())).arg("-Oz").arg(path).output().map_err(|e| format!("split: cannot start wasm-opt: {e}"))?;
                        if !done.status.success() {
                            return Err(format!("split: wasm-opt failed on {}: {}", path.display(), String::from_utf8_lossy(&done.stderr)));
                        }
                        std::fs::rename(&out, path).map_err(|e| format!("split: cannot move {}: {e}", out.display()))?;
                    }
                    Ok(())
                })
            })
            .collect();
        workers.into_iter().map(|w| w.join().unwrap_or_else(|_| Err("split: a wasm-opt thread panicked".into()))).collect::<Result<Vec<()>, String>>()
    })?;
    println!("[xtask] split: wasm-opt -Oz on {} modules", paths.len());
    Ok(())
}

/// One hash of every piece (16 hex digits of SHA-256), so the names of one build go together.
fn build_hash(main: &[u8], pieces: &[(String, Vec<u8>)], glue: &str, link: &str) -> String {
    let mut all = Vec::new();
    for part in [main, glue.as_bytes(), link.as_bytes()].into_iter().chain(pieces.iter().flat_map(|(s, b)| [s.as_bytes(), b.as_slice()])) {
        all.extend_from_slice(&(part.len() as u64).to_le_bytes());
        all.extend_from_slice(part);
    }
    sha256(&all)[..8].iter().map(|b| format!("{b:02x}")).collect()
}

/// The hashed file names of one build.
struct Names {
    hash: String,
    glue: String,
    main: String,
    link: String,
}

impl Names {
    fn new(hash: &str) -> Names {
        Names {
            hash: hash.to_string(),
            glue: format!("{PAGE}-{hash}.js"),
            main: format!("{PAGE}-{hash}_bg.wasm"),
            link: format!("hysteron-split-{hash}.js"),
        }
    }

    /// A piece's file name from its stem as wasm-split names it (`split_<name>`, `chunk_<n>`).
    fn piece(&self, stem: &str) -> String {
        format!("hysteron-{stem}-{}.wasm", self.hash)
    }
}

/// The glue's imports of the link module (wasm-bindgen writes one per imported function), pointed at
/// its hashed name.
fn rewrite_glue(glue: &str, names: &Names) -> Result<String, String> {
    let mut out = glue.to_string();
    let mut found = 0;
    for q in ['"', '\''] {
        let from = format!("from {q}{LINK}{q}");
        found += out.matches(&from).count();
        out = out.replace(&from, &format!("from {q}./{}{q}", names.link));
    }
    if found == 0 {
        return Err(format!("split: the glue does not import the link module {LINK}; wasm-bindgen changed?"));
    }
    Ok(out)
}

/// The link module's import of the glue and its fetches of the pieces, pointed at their hashed names.
fn rewrite_link(link: &str, pieces: &[(String, Vec<u8>)], names: &Names) -> Result<String, String> {
    let from = format!("from \"{GLUE}\"");
    if link.matches(&from).count() != 1 {
        return Err(format!("split: the link module should import the glue once ({from}); wasm-split changed?"));
    }
    let mut out = link.replace(&from, &format!("from \"./{}\"", names.glue));
    for (stem, _) in pieces {
        let old = format!("\"./{stem}.wasm\"");
        if !out.contains(&old) {
            return Err(format!("split: the link module does not fetch {old}"));
        }
        out = out.replace(&old, &format!("\"./{}\"", names.piece(stem)));
    }
    Ok(out)
}

/// `index` with every reference to `old` pointed at `new`, and the integrity of the tags that name it
/// (Trunk's preload hints) made that of `bytes` (SHA-256, W3C Subresource Integrity).
fn repoint_index(index: &str, old: &str, new: &str, bytes: &[u8]) -> Result<String, String> {
    if !index.contains(old) {
        return Err(format!("split: index.html does not name {old}"));
    }
    let integrity = format!("sha256-{}", base64(&sha256(bytes)));
    let mut out = String::with_capacity(index.len());
    let mut rest = index;
    while let Some(i) = rest.find('<') {
        out.push_str(&rest[..i].replace(old, new));
        let after = &rest[i..];
        let end = after.find('>').map(|e| e + 1).unwrap_or(after.len());
        let tag = &after[..end];
        if tag.starts_with("<link") && tag.contains(old) {
            let mut t = tag.replace(old, new);
            if let Some(s) = t.find(" integrity=\"") {
                let v = s + 12;
                let e = t[v..].find('"').map(|e| e + v).ok_or("split: unterminated integrity attribute")?;
                t.replace_range(v..e, &integrity);
            }
            out.push_str(&t);
        } else {
            out.push_str(&tag.replace(old, new));
        }
        rest = &after[end..];
    }
    out.push_str(&rest.replace(old, new));
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn index_is_repointed_with_new_integrity() {
        let index = "<link rel=\"modulepreload\" href=\"./hysteron-app-old.js\" integrity=\"sha384-AAA\">\
                     <script type=\"module\">import init from './hysteron-app-old.js';</script>";
        let out = repoint_index(index, "hysteron-app-old.js", "hysteron-app-new.js", b"abc").unwrap();
        assert!(!out.contains("old"));
        // SHA-256 of "abc" in base64 (FIPS 180-4 example value, from memory, as base64).
        assert!(out.contains("integrity=\"sha256-ungWv48Bz+pBQUDeXa4iI7ADYaOWF3qctBD/YfIAFa0=\""), "{out}");
        assert!(out.contains("import init from './hysteron-app-new.js';"));
    }

    #[test]
    fn link_and_glue_point_at_hashed_names() {
        let names = Names::new("0123456789abcdef");
        let glue = "import * as import1 from \"./hysteron-split.js\"\nimport * as import2 from \"./hysteron-split.js\"\n\"./hysteron-split.js\": import1,";
        let g = rewrite_glue(glue, &names).unwrap();
        assert_eq!(g.matches("from \"./hysteron-split-0123456789abcdef.js\"").count(), 2, "{g}");
        assert!(g.contains("\"./hysteron-split.js\": import1,"), "the wasm import's module name stays");
        assert!(rewrite_glue("no import", &names).is_err());
        let link = "import { initSync } from \"./hysteron-app.js\";\nfetch(new URL(\"./split_a.wasm\", import.meta.url))";
        let pieces = vec![("split_a".to_string(), vec![0u8])];
        let l = rewrite_link(link, &pieces, &names).unwrap();
        assert!(l.contains("from \"./hysteron-app-0123456789abcdef.js\""));
        assert!(l.contains("\"./hysteron-split_a-0123456789abcdef.wasm\""));
        assert!(rewrite_link(link, &[("split_b".to_string(), vec![])], &names).is_err());
    }

    #[test]
    fn the_hash_changes_with_any_piece() {
        let p = vec![("split_a".to_string(), vec![1u8, 2])];
        let q = vec![("split_a".to_string(), vec![1u8, 3])];
        assert_ne!(build_hash(b"m", &p, "g", "l"), build_hash(b"m", &q, "g", "l"));
        assert_ne!(build_hash(b"m", &p, "g", "l"), build_hash(b"m", &p, "g2", "l"));
        assert_eq!(build_hash(b"m", &p, "g", "l").len(), 16);
    }
}
