//! Browser end-to-end: offline use. The page's service worker keeps the built files after the first
//! visit; a new build replaces the kept copy (new cache, old one deleted); with the server stopped
//! (every request refused, as on a machine with no network) a reload still opens a working page.
//!
//! The test serves its own copy of `dist/` so it can make a "second build" in it and stop the server.

use hysteron_tests::{browser, server};
use std::path::{Path, PathBuf};

/// The `VERSION` and `FILES` a built `sw.js` carries (as `cargo xtask post-build` wrote them).
fn worker_version_and_files(sw: &str) -> (String, Vec<String>) {
    let after = |mark: &str| sw.split(mark).nth(1).unwrap_or_else(|| panic!("sw.js has no {mark}: was the build's post-build hook run?"));
    let version = after("const VERSION = '").split('\'').next().unwrap_or_default().to_string();
    let list = after("const FILES = [").split(']').next().unwrap_or_default();
    let files = list.split(',').map(|f| f.trim().trim_matches('\'').to_string()).filter(|f| !f.is_empty()).collect();
    (version, files)
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("make the copy's folder");
    for entry in std::fs::read_dir(from).expect("list dist") {
        let path = entry.expect("list dist").path();
        let target = to.join(path.file_name().expect("a file name"));
        if path.is_dir() {
            copy_dir(&path, &target);
        } else {
            std::fs::copy(&path, &target).expect("copy a built file");
        }
    }
}

/// The names of the caches the page's origin holds (the Cache API, as the service worker sees it).
const CACHE_NAMES_JS: &str = "const done = arguments[arguments.length - 1]; caches.keys().then(done, e => done(String(e)));";

async fn cache_names(s: &browser::Session) -> Vec<String> {
    let v = s.client.execute_async(CACHE_NAMES_JS, vec![]).await.expect("list caches");
    v.as_array().map(|a| a.iter().filter_map(|x| x.as_str().map(str::to_string)).collect()).unwrap_or_default()
}

#[tokio::test(flavor = "multi_thread")]
async fn page_works_offline_after_first_visit_and_updates_cleanly() {
    let dist = server::dist_dir();
    let sw_text = std::fs::read_to_string(dist.join("sw.js"))
        .unwrap_or_else(|e| panic!("dist/sw.js missing ({e}): build the page with `cargo xtask build` first"));
    let (version, files) = worker_version_and_files(&sw_text);
    assert_eq!(version.len(), 16, "version {version:?} is not 16 hex digits");
    assert!(files.iter().any(|f| f == "index.html"), "index.html not kept: {files:?}");
    assert!(files.iter().any(|f| f.ends_with(".wasm")), "no .wasm kept: {files:?}");
    assert!(files.iter().any(|f| f == "manifest.webmanifest"), "manifest not kept: {files:?}");
    assert!(!files.iter().any(|f| f == "sw.js"), "the worker lists itself");

    let root: PathBuf = std::env::temp_dir().join(format!("hysteron-offline-dist-{}", std::process::id()));
    std::fs::remove_dir_all(&root).ok();
    copy_dir(&dist, &root);
    let (base, stop) = server::serve_stoppable(root.clone()).await.expect("start the static server");
    let s = browser::start_at(base.clone()).await;

    // The manifest is linked and readable, with our name and the icon.
    let manifest = s
        .client
        .execute_async(
            "const done = arguments[arguments.length - 1]; \
             const link = document.querySelector('link[rel=manifest]'); \
             fetch(link.href).then(r => r.json()).then(done, e => done(String(e)));",
            vec![],
        )
        .await
        .expect("read the manifest");
    assert_eq!(manifest["short_name"], "Hysteron", "{manifest}");
    assert_eq!(manifest["icons"][0]["src"], "icon.svg", "{manifest}");

    // First visit: the worker installs, keeps every built file, and takes control of the page.
    s.wait_js("the service worker to control the page", "return !!navigator.serviceWorker.controller").await;
    let first_cache = format!("hysteron-{version}");
    let names = cache_names(&s).await;
    assert_eq!(names, vec![first_cache.clone()], "caches after the first visit");
    let kept = s
        .client
        .execute_async(
            &format!(
                "const done = arguments[arguments.length - 1]; \
                 caches.open('{first_cache}').then(c => c.keys()).then(ks => done(ks.map(r => r.url)), e => done(String(e)));"
            ),
            vec![],
        )
        .await
        .expect("list the kept files");
    let kept: Vec<String> = kept.as_array().map(|a| a.iter().filter_map(|x| x.as_str().map(str::to_string)).collect()).unwrap_or_default();
    for f in &files {
        assert!(kept.contains(&format!("{base}{f}")), "{f} not in the cache: {kept:?}");
    }

    // A demo opens and shows its thresholds while online.
    s.add_starter("demo:lathe-tachometer").await;
    let vt_online = s.number("#vt-upper").await;
    assert!(vt_online.is_finite(), "VT+ shown online: {vt_online}");

    // A second build: index.html changes, so sw.js gets a new version. The browser's update check
    // installs the new worker; it keeps the new files under the new name and deletes the old cache.
    let marker = "<!-- second build -->";
    let index = std::fs::read_to_string(root.join("index.html")).expect("read the copy's index.html");
    std::fs::write(root.join("index.html"), index.replace("</body>", &format!("{marker}\n</body>"))).expect("write index.html");
    let second = "0123456789abcdef";
    assert_ne!(second, version);
    std::fs::write(root.join("sw.js"), sw_text.replace(&version, second)).expect("write sw.js");
    let second_cache = format!("hysteron-{second}");
    s.js("navigator.serviceWorker.getRegistration().then(r => r && r.update()); return true;").await;
    let names = {
        let (s, want) = (&s, &second_cache);
        browser::wait_until("the new cache to replace the old one", browser::WAIT, move || async move {
            let names = cache_names(s).await;
            if names == [want.clone()] { Ok(names) } else { Err(format!("{names:?}")) }
        })
        .await
    };
    assert_eq!(names, vec![second_cache]);
    s.wait_js("the new worker to control the page", "const c = navigator.serviceWorker.controller; return !!c && c.state === 'activated';").await;

    // Offline: the server stops, every request to it is refused.
    stop.abort();
    let port: u16 = base.trim_end_matches('/').rsplit(':').next().and_then(|p| p.parse().ok()).expect("port in base URL");
    browser::wait_until("the server to refuse connections", browser::WAIT, move || async move {
        match tokio::net::TcpStream::connect(("127.0.0.1", port)).await {
            Err(_) => Ok(()),
            Ok(_) => Err("still accepting".to_string()),
        }
    })
    .await;

    // The reload comes from the kept copy of the second build, and the page works: the design shown
    // before comes back with the same VT+, and a new demo opens with its results.
    s.reload().await;
    let html = s.js("return document.documentElement.outerHTML.includes('second build')").await;
    assert_eq!(html, serde_json::Value::Bool(true), "the offline page is not the second build");
    let vt_back = s.wait_number("#vt-upper", vt_online, 0.0).await;
    assert_eq!(vt_back, vt_online);
    s.add_starter("demo:cabin-battery").await;
    let vt_new = s.number("#vt-upper").await;
    assert!(vt_new.is_finite(), "VT+ shown offline: {vt_new}");
    // The network really is gone for the page: a file the worker does not keep cannot be fetched.
    let missing = s
        .client
        .execute_async(
            "const done = arguments[arguments.length - 1]; fetch('not-kept.txt').then(r => done('status ' + r.status), e => done('refused'));",
            vec![],
        )
        .await
        .expect("fetch a file not kept");
    assert_eq!(missing, "refused");

    s.close().await;
    std::fs::remove_dir_all(&root).ok();
}
