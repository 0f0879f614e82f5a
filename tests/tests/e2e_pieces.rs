//! Browser end-to-end: the page loaded in pieces (DEVELOPERS.md, "Loading in pieces"). The page's
//! first module shows the notebook as last saved (`app/src/glance.rs`); the editor arrives as a
//! piece fetched at once, and the studies, the schematic, the parts section, the part list, the
//! share section and the sheet as another once the editor has painted. A piece that cannot be
//! fetched is reported once, at the top, and leaves the rest working — never a stopped page: without
//! the editor's piece the saved designs stay on screen; without the sections' piece the design
//! still takes edits.

use hysteron_tests::{browser, server};
use std::path::PathBuf;

/// The built files whose names mark them as pieces of the page.
fn pieces() -> Vec<String> {
    let mut out: Vec<String> = std::fs::read_dir(server::dist_dir())
        .expect("list dist/")
        .flatten()
        .map(|e| e.file_name().to_string_lossy().to_string())
        .filter(|n| n.ends_with(".wasm") && (n.starts_with("hysteron-split_") || n.starts_with("hysteron-chunk_")))
        .collect();
    out.sort();
    out
}

/// A copy of the build without the piece whose file name starts with `piece_prefix`, in a folder
/// named after `label` (as after a rebuild while the page was open, or offline before the service
/// worker kept it). The caller removes the folder.
fn dist_without(piece_prefix: &str, label: &str) -> PathBuf {
    let root: PathBuf = std::env::temp_dir().join(format!("hysteron-{label}-dist-{}", std::process::id()));
    std::fs::remove_dir_all(&root).ok();
    std::fs::create_dir_all(&root).expect("make the copy");
    for entry in std::fs::read_dir(server::dist_dir()).expect("list dist/").flatten() {
        let name = entry.file_name().to_string_lossy().to_string();
        if entry.path().is_file() && !name.starts_with(piece_prefix) {
            std::fs::copy(entry.path(), root.join(&name)).expect("copy a built file");
        }
    }
    root
}

#[tokio::test(flavor = "multi_thread")]
async fn every_section_arrives_and_a_missing_piece_is_reported_in_its_place() {
    let pieces = pieces();
    assert!(
        pieces.iter().any(|p| p.starts_with("hysteron-split_later_views-")),
        "the page was not built in pieces (cargo xtask build sets HYSTERON_SPLIT=1): {pieces:?}"
    );

    // The page as built: opening a demo brings every deferred section, fetched as one piece.
    let s = browser::start().await;
    s.add_starter("demo:sawmill-end-stop").await;
    for section in ["#tolerance", "#bom", "#signal-run"] {
        s.wait_for(section).await;
    }
    let fetched = s.js("return performance.getEntriesByType('resource').map(e => e.name).filter(n => n.includes('hysteron-split_later_views-')).length").await;
    assert!(fetched.as_u64().unwrap_or(0) >= 1, "the sections' piece was not fetched: {fetched}");
    s.close().await;

    // The build without the sections' piece.
    let root = dist_without("hysteron-split_later_views-", "pieces");
    let base = server::serve(root.clone()).await.expect("serve the copy");
    let s = browser::start_at(base).await;
    s.add_starter("demo:sawmill-end-stop").await;
    // The page says once, at its top, that part of it is missing, in words; each section with a
    // place of its own (11 of `view::Later`'s 14: not the editor, the results' windows job nor a shared link's
    // view) points there; everything else is there and works.
    let message = s.wait_text("#piece-missing[role=alert]", "the missing piece's message", |t| t.contains("could not be loaded")).await;
    assert!(message.contains("Reload the page"), "{message}");
    s.wait_for("#fold-tolerance summary").await.click().await.expect("open the tolerance fold");
    s.wait_text("#fold-tolerance .piece-missing", "the tolerance study's pointer", |t| t.contains("Not loaded")).await;
    assert_eq!(s.js("return document.querySelectorAll('#tolerance').length").await, 0);
    s.wait_js("every section with a place to say it is not loaded", "return document.querySelectorAll('.piece-missing').length === 11;").await;
    let alerts = s.js("return [...document.querySelectorAll('[role=alert]')].filter(e => e.textContent.includes('could not be loaded')).length").await;
    assert_eq!(alerts.as_u64(), Some(1), "the missing piece is announced once");
    let vt = s.number("#vt-upper").await;
    assert!(vt.is_finite(), "VT+ still shown: {vt}");
    // The page still takes edits: a new R1 typed in moves VT+ (R1 3.3 kΩ → 4.7 kΩ).
    s.type_into("#field-r1_ohm", "4k7").await;
    let moved = s.wait_number_change("#vt-upper", vt).await;
    assert!(moved.is_finite() && moved != vt, "VT+ {vt} → {moved}");
    s.close().await;
    std::fs::remove_dir_all(&root).ok();
}

#[tokio::test(flavor = "multi_thread")]
async fn a_late_piece_leaves_a_loading_line_and_the_design_works_meanwhile() {
    // The sections' piece held back for 4 s by the server, as over a slow link: the design shows
    // and takes edits at once; the schematic's place says it is loading (after a moment, so a quick
    // load never flashes it), and the line gives way to the schematic once the piece arrives.
    let base = server::serve_slow(server::dist_dir(), "hysteron-split_later_views-", std::time::Duration::from_secs(4))
        .await
        .expect("serve the build");
    let s = browser::start_at(base).await;
    s.add_starter("demo:sawmill-end-stop").await;
    let line = s
        .wait_text(".design-view .later-wait", "the schematic's loading line", |t| t.contains("Loading this section"))
        .await;
    assert!(line.contains('…'), "{line}");
    s.wait_js(
        "the loading line to show after its moment",
        "const p = document.querySelector('.design-view .later-wait'); return !!p && getComputedStyle(p).visibility === 'visible';",
    )
    .await;
    assert_eq!(s.js("return document.querySelectorAll('#schematic').length").await, 0, "the schematic came before its piece");
    let waiting = s.js("return document.querySelectorAll('.later-wait').length").await.as_u64().unwrap_or(0);
    assert!(waiting >= 4, "the schematic, parts, part list and share places each hold a line: {waiting}");
    // Meanwhile the design takes edits: a new R1 moves VT+ (R1 3.3 kΩ → 4.7 kΩ).
    let vt = s.number("#vt-upper").await;
    s.type_into("#field-r1_ohm", "4k7").await;
    let moved = s.wait_number_change("#vt-upper", vt).await;
    assert!(moved.is_finite() && moved != vt, "VT+ {vt} → {moved}");
    // The piece arrives: every line gives way to its section.
    s.wait_for("#schematic").await;
    s.wait_js("every loading line to give way", "return document.querySelectorAll('.later-wait').length === 0;").await;
    s.close().await;
}

/// A first session's notebook after adding the sawmill demo through the page: every item of its
/// local storage (JSON text of a key → text map), the demo's name and the VT+ its stored snapshot
/// keeps (`core::overview::Snapshot`, as the page saved it).
async fn saved_demo() -> (String, String, f64) {
    let s = browser::start().await;
    s.add_starter("demo:sawmill-end-stop").await;
    for section in ["#tolerance", "#bom", "#signal-run"] {
        s.wait_for(section).await;
    }
    let fetched = s.js("return performance.getEntriesByType('resource').map(e => e.name).filter(n => n.includes('hysteron-split_editor-')).length").await;
    assert!(fetched.as_u64().unwrap_or(0) >= 1, "the editor's piece was not fetched: {fetched}");
    s.wait_js(
        "the demo to be stored with its snapshot",
        "const li = document.querySelector('#design-list li.open'); const raw = li && localStorage.getItem('hysteron/design/' + li.dataset.id); \
         return raw && JSON.parse(raw).snapshot ? true : null;",
    )
    .await;
    let items = s.js("return JSON.stringify(Object.fromEntries(Object.keys(localStorage).map(k => [k, localStorage.getItem(k)])));").await;
    let open = s
        .js("const li = document.querySelector('#design-list li.open'); const e = JSON.parse(localStorage.getItem('hysteron/design/' + li.dataset.id)); return [e.record.name, e.snapshot.vt_upper_v];")
        .await;
    s.close().await;
    (items.as_str().expect("storage as text").to_string(), open[0].as_str().unwrap_or_default().to_string(), open[1].as_f64().expect("stored VT+"))
}

/// Opens the page at `base` with local storage holding `items` (from [`saved_demo`]; the page's
/// origin differs from the first session's): a script run before the page's own writes them once.
async fn open_with_saved(base: &str, items: &str) -> browser::Session {
    let s = browser::open_at(base.to_string()).await;
    let seed = format!("if (!localStorage.getItem('hysteron/index')) {{ for (const [k, v] of Object.entries({items})) localStorage.setItem(k, v); }}");
    s.devtools("Page.addScriptToEvaluateOnNewDocument", serde_json::json!({"source": seed})).await;
    s.client.goto(base).await.expect("open the page again");
    s.wait_for("header.top").await;
    s
}

/// The notebook as last saved is on screen: the design's name and its stored VT+, and nothing
/// there can be typed into.
async fn shows_last_saved(s: &browser::Session, name: &str, vt: f64) {
    let figures = s.wait_text("#glance-figures", "the stored figures", |t| t.contains("VT+")).await;
    assert!(figures.contains(&format!("{vt:.4}")), "stored VT+ {vt} not in {figures:?}");
    let names = s.js("return [...document.querySelectorAll('#glance .design-name, #glance .glance-name')].map(e => e.textContent)").await;
    assert!(names.as_array().is_some_and(|n| n.iter().filter(|n| n.as_str() == Some(name)).count() == 2), "{name:?} in the list and as the open design: {names}");
    let fields = s.js("return document.querySelectorAll('#glance input, #glance select, #glance textarea, #glance button').length").await;
    assert_eq!(fields.as_u64(), Some(0), "nothing before the editor takes keys");
}

#[tokio::test(flavor = "multi_thread")]
async fn a_missing_editor_is_reported_once_and_leaves_the_designs_as_last_saved() {
    let pieces = pieces();
    assert!(
        pieces.iter().any(|p| p.starts_with("hysteron-split_editor-")),
        "the page was not built in pieces (cargo xtask build sets HYSTERON_SPLIT=1): {pieces:?}"
    );
    let (items, name, vt) = saved_demo().await;

    // The build without the editor's piece.
    let root = dist_without("hysteron-split_editor-", "editor");
    let base = server::serve(root.clone()).await.expect("serve the copy");
    let s = open_with_saved(&base, &items).await;
    // Said once, at the top, in words; the saved designs stay on screen, and say why.
    let message = s.wait_text("#piece-missing[role=alert]", "the missing piece's message", |t| t.contains("could not be loaded")).await;
    assert!(message.contains("Reload the page") && message.contains("your designs are kept"), "{message}");
    let line = s.wait_text("#glance .glance-missing", "the saved designs' line", |t| t.contains("could not be loaded")).await;
    assert!(line.contains("as last saved"), "{line}");
    shows_last_saved(&s, &name, vt).await;
    let alerts = s.js("return [...document.querySelectorAll('[role=alert]')].filter(e => e.textContent.includes('could not be loaded')).length").await;
    assert_eq!(alerts.as_u64(), Some(1), "the missing piece is announced once");
    assert_eq!(s.js("return document.querySelectorAll('#design, .glance-wait').length").await, 0, "no editor, and no promise of one");
    // What was stored is untouched.
    let kept = s.js("return JSON.stringify(Object.fromEntries(Object.keys(localStorage).map(k => [k, localStorage.getItem(k)])));").await;
    let as_map = |t: &str| serde_json::from_str::<serde_json::Value>(t).expect("storage as JSON");
    assert!(as_map(kept.as_str().unwrap_or_default()) == as_map(&items), "storage changed while the editor was missing");
    s.close().await;
    std::fs::remove_dir_all(&root).ok();
}

#[tokio::test(flavor = "multi_thread")]
async fn a_late_editor_leaves_the_designs_as_last_saved_on_screen_then_takes_edits() {
    // The editor's piece held back for 4 s by the server, as over a slow link: the notebook as last
    // saved shows meanwhile (after a moment, so a quick load never flashes it), with a line saying
    // the editor is on its way; then the editor replaces it, agrees with the stored figures and
    // takes edits.
    let (items, name, vt) = saved_demo().await;
    let base = server::serve_slow(server::dist_dir(), "hysteron-split_editor-", std::time::Duration::from_secs(4))
        .await
        .expect("serve the build");
    let s = open_with_saved(&base, &items).await;
    let line = s.wait_text("#glance .glance-wait", "the editor's loading line", |t| t.contains("Opening the editor")).await;
    assert!(line.contains('…'), "{line}");
    s.wait_js(
        "the saved designs and the line to show after their moment",
        "const g = document.querySelector('#glance'), p = document.querySelector('#glance .glance-wait'); \
         return !!g && !!p && getComputedStyle(g).visibility === 'visible' && getComputedStyle(p).visibility === 'visible';",
    )
    .await;
    shows_last_saved(&s, &name, vt).await;
    assert_eq!(s.js("return document.querySelectorAll('#design').length").await, 0, "the editor came before its piece");
    // The piece arrives: the editor replaces the saved view, computes the same VT+ and takes edits
    // (R1 3.3 kΩ → 4.7 kΩ moves VT+).
    let now = s.number("#vt-upper").await;
    assert!((now - vt).abs() <= 1e-9 * vt.abs(), "the editor's VT+ {now} against the stored {vt}");
    assert_eq!(s.js("return document.querySelectorAll('#glance').length").await, 0, "the saved view gave way");
    s.type_into("#field-r1_ohm", "4k7").await;
    let moved = s.wait_number_change("#vt-upper", now).await;
    assert!(moved.is_finite() && moved != now, "VT+ {now} → {moved}");
    s.wait_for("#schematic").await;
    s.wait_js("every loading line to give way", "return document.querySelectorAll('.later-wait').length === 0;").await;
    s.close().await;
}
