//! Browser end-to-end: the page loaded in pieces (DEVELOPERS.md, "Loading in pieces"). The page's
//! first module carries the design; the studies, the schematic, the parts section, the part list, the
//! share section and the sheet arrive as one piece after the first paint. A piece that cannot be fetched leaves a message in its
//! place and the rest of the page working — never a stopped page.

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

    // A copy of the build without the sections' piece (as after a rebuild while the page
    // was open, or offline before the service worker kept it).
    let root: PathBuf = std::env::temp_dir().join(format!("hysteron-pieces-dist-{}", std::process::id()));
    std::fs::remove_dir_all(&root).ok();
    std::fs::create_dir_all(&root).expect("make the copy");
    for entry in std::fs::read_dir(server::dist_dir()).expect("list dist/").flatten() {
        let name = entry.file_name().to_string_lossy().to_string();
        if entry.path().is_file() && !name.starts_with("hysteron-split_later_views-") {
            std::fs::copy(entry.path(), root.join(&name)).expect("copy a built file");
        }
    }
    let base = server::serve(root.clone()).await.expect("serve the copy");
    let s = browser::start_at(base).await;
    s.add_starter("demo:sawmill-end-stop").await;
    // The page says once, at its top, that part of it is missing, in words; each section with a
    // place of its own (11 of `view::Later`'s 13: not the results' windows job nor a shared link's
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
