//! Offline use: fills in the service worker Trunk copied into the build (`static/sw.js` → `sw.js`)
//! with the list of built files and a version string (a Trunk post-build hook, after the policy).
//!
//! The version is the first 16 hex digits of the SHA-256 of every built file's name and content
//! (sorted by name; `sw.js` itself excluded), so any change to any file gives a new version, a new
//! `sw.js`, and in the browser a new cache that replaces the old one.

use std::path::Path;

/// The text in `static/sw.js` replaced by the version string.
pub const VERSION_MARK: &str = "__HYSTERON_VERSION__";
/// The text in `static/sw.js` (inside `['…']`) replaced by the quoted, comma-separated file list.
pub const FILES_MARK: &str = "'__HYSTERON_FILES__'";
/// The service worker's file name in the build.
pub const WORKER: &str = "sw.js";

/// Reads the files under `$TRUNK_STAGING_DIR`, writes the filled-in `sw.js` there.
pub fn write_service_worker() -> Result<(), String> {
    let dir = std::env::var("TRUNK_STAGING_DIR").map_err(|_| "offline: run as a Trunk post_build hook (TRUNK_STAGING_DIR unset)".to_string())?;
    let dir = Path::new(&dir);
    let files = built_files(dir)?;
    let worker_path = dir.join(WORKER);
    let template = std::fs::read_to_string(&worker_path)
        .map_err(|e| format!("offline: cannot read {} (is static/sw.js copied by app/index.html?): {e}", worker_path.display()))?;
    let out = fill_worker(&template, &files)?;
    std::fs::write(&worker_path, out).map_err(|e| format!("offline: cannot write {}: {e}", worker_path.display()))?;
    println!("[xtask] offline: {} files listed in {} (version {})", files.len(), worker_path.display(), version(&files));
    Ok(())
}

/// Every file under `dir` but the worker, as (path relative to `dir` with `/`, content), sorted by path.
pub fn built_files(dir: &Path) -> Result<Vec<(String, Vec<u8>)>, String> {
    let mut out = Vec::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        let entries = std::fs::read_dir(&d).map_err(|e| format!("offline: cannot list {}: {e}", d.display()))?;
        for entry in entries {
            let path = entry.map_err(|e| format!("offline: cannot list {}: {e}", d.display()))?.path();
            if path.is_dir() {
                stack.push(path);
                continue;
            }
            let rel = path.strip_prefix(dir).map_err(|e| e.to_string())?;
            let rel: Vec<String> = rel.components().map(|c| c.as_os_str().to_string_lossy().into_owned()).collect();
            let rel = rel.join("/");
            if rel == WORKER {
                continue;
            }
            let body = std::fs::read(&path).map_err(|e| format!("offline: cannot read {}: {e}", path.display()))?;
            out.push((rel, body));
        }
    }
    out.sort_by(|a, b| a.0.cmp(&b.0));
    Ok(out)
}

/// The build's version: 16 hex digits of SHA-256 over each file's name, length and content.
pub fn version(files: &[(String, Vec<u8>)]) -> String {
    let mut all = Vec::new();
    for (name, body) in files {
        all.extend_from_slice(name.as_bytes());
        all.push(0);
        all.extend_from_slice(&(body.len() as u64).to_le_bytes());
        all.extend_from_slice(body);
    }
    crate::csp::sha256(&all).iter().take(8).map(|b| format!("{b:02x}")).collect()
}

/// The worker template with the version and the file list filled in. A template without both marks
/// is refused (the worker would keep nothing, or never change).
pub fn fill_worker(template: &str, files: &[(String, Vec<u8>)]) -> Result<String, String> {
    if !template.contains(VERSION_MARK) || !template.contains(FILES_MARK) {
        return Err(format!("offline: {WORKER} lacks {VERSION_MARK} or {FILES_MARK}; was it filled in already?"));
    }
    let list: Vec<String> = files
        .iter()
        .map(|(name, _)| {
            // Names are Trunk's output names (letters, digits, '-', '_', '.', '/'); anything else is
            // escaped so the list stays one valid JavaScript string each.
            let escaped: String = name.chars().map(|c| if c.is_ascii_alphanumeric() || "-_./".contains(c) { c.to_string() } else { format!("\\u{{{:x}}}", c as u32) }).collect();
            format!("'{escaped}'")
        })
        .collect();
    Ok(template.replace(VERSION_MARK, &version(files)).replace(FILES_MARK, &list.join(", ")))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn files(pairs: &[(&str, &str)]) -> Vec<(String, Vec<u8>)> {
        pairs.iter().map(|(n, b)| (n.to_string(), b.as_bytes().to_vec())).collect()
    }

    #[test]
    fn worker_lists_every_file_with_the_version() {
        let fs = files(&[("index.html", "<html>"), ("app-1a2b.wasm", "\0asm")]);
        let out = fill_worker("const VERSION = '__HYSTERON_VERSION__';\nconst FILES = ['__HYSTERON_FILES__'];", &fs).unwrap();
        assert_eq!(out, format!("const VERSION = '{}';\nconst FILES = ['index.html', 'app-1a2b.wasm'];", version(&fs)));
        assert_eq!(version(&fs).len(), 16);
    }

    #[test]
    fn any_changed_byte_or_name_changes_the_version() {
        let base = version(&files(&[("index.html", "<html>a")]));
        assert_ne!(base, version(&files(&[("index.html", "<html>b")])));
        assert_ne!(base, version(&files(&[("index.htm", "<html>a")])));
        // Moving a byte from one file's end to the next file's name is a different build too.
        assert_ne!(version(&files(&[("a", "xy"), ("b", "")])), version(&files(&[("a", "x"), ("yb", "")])));
    }

    #[test]
    fn filled_worker_is_refused_a_second_time() {
        let fs = files(&[("index.html", "x")]);
        let once = fill_worker("'__HYSTERON_VERSION__' ['__HYSTERON_FILES__']", &fs).unwrap();
        assert!(fill_worker(&once, &fs).is_err());
    }

    #[test]
    fn odd_names_stay_one_javascript_string() {
        let out = fill_worker("'__HYSTERON_VERSION__' ['__HYSTERON_FILES__']", &files(&[("a'b.js", "")])).unwrap();
        assert!(out.ends_with("['a\\u{27}b.js']"), "{out}");
    }

    #[test]
    fn built_files_walks_folders_and_skips_the_worker() {
        let dir = std::env::temp_dir().join(format!("hysteron-offline-{}", std::process::id()));
        std::fs::create_dir_all(dir.join("snippets/x")).unwrap();
        std::fs::write(dir.join("index.html"), "i").unwrap();
        std::fs::write(dir.join("sw.js"), "w").unwrap();
        std::fs::write(dir.join("snippets/x/m.js"), "m").unwrap();
        let got: Vec<String> = built_files(&dir).unwrap().into_iter().map(|(n, _)| n).collect();
        std::fs::remove_dir_all(&dir).ok();
        assert_eq!(got, vec!["index.html".to_string(), "snippets/x/m.js".to_string()]);
    }
}
