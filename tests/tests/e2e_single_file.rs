//! Browser end-to-end: the single-file page (`cargo xtask single-file` → `dist-single/hysteron.html`)
//! opened straight from disk (a file:// URL, no server): it starts under its own strict policy, an
//! edit is kept in local storage, a reload brings the design back, a share link made there opens the
//! design read-only, and the design sheet prints on one page of A4 (page count read with pdfinfo
//! from poppler-utils).

use fantoccini::wd::{PrintConfiguration, PrintSize};
use hysteron_tests::browser;
use std::path::Path;

#[tokio::test(flavor = "multi_thread")]
async fn single_file_opens_from_disk_and_keeps_an_edit() {
    let file = Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join("dist-single").join("hysteron.html");
    let file = file.canonicalize().unwrap_or_else(|e| {
        panic!("{} missing ({e}): run `cargo xtask single-file` (or `cargo xtask test`) first", file.display())
    });
    let html = std::fs::read_to_string(&file).expect("read the single file");
    // Nothing is loaded from anywhere: no src= or href= to another file.
    for load in ["src=\"./", "href=\"./", "from './", "module_or_path: './"] {
        assert!(!html.contains(load), "the single file still loads {load}");
    }
    assert!(html.contains("default-src 'none'"), "no strict policy in the single file");

    let s = browser::start_at(format!("file://{}", file.display())).await;
    let url = s.js("return location.protocol").await;
    assert_eq!(url, "file:");
    s.wait_for("#field-ra_ohm").await;
    s.type_into("#field-supply_v", "5").await;
    s.type_into("#field-ra_ohm", "4k7").await;
    s.wait_stored("r.circuit.ra_ohm === 4700").await;
    let vt = s.wait_number_change("#vt-upper", f64::NAN).await;
    assert!(vt.is_finite());

    s.reload().await;
    let back = s.wait_number("#vt-upper", vt, 0.0).await;
    assert_eq!(back, vt, "VT+ after reloading the file");
    s.wait_stored("r.circuit.ra_ohm === 4700 && r.circuit.device.supply_v === 5").await;

    // A share link made in the file is the file's URL with the design after '#'; it opens read-only.
    s.wait_for("#make-link").await.click().await.expect("make a share link");
    let link = s.wait_for("#share-link").await.prop("value").await.ok().flatten().unwrap_or_default();
    assert!(link.starts_with("file://") && link.contains("#h1."), "share link from the file: {link}");
    s.client.goto(&link).await.expect("open the share link");
    s.wait_for("#shared-design").await;
    let shared = s.number("#shared-vt-upper").await;
    assert_eq!(shared, vt, "the shared design's VT+");

    // Printing the design sheet gives one page of A4.
    s.js("window.dispatchEvent(new Event('beforeprint')); return 1;").await;
    s.wait_js(
        "the print sheet to show its thresholds",
        "const e = document.querySelector('#sheet-vt-upper'); return !!e && e.textContent.endsWith(' V')",
    )
    .await;
    let cfg = PrintConfiguration::builder().size(PrintSize::A4).shrink_to_fit(false).background(true).build().expect("print settings");
    let pdf = s.client.print(cfg).await.expect("print to PDF");
    let path = std::env::temp_dir().join(format!("hysteron-single-{}.pdf", std::process::id()));
    std::fs::write(&path, &pdf).expect("write the PDF");
    let out = std::process::Command::new("pdfinfo").arg(&path).output().expect("pdfinfo (poppler-utils) runs");
    std::fs::remove_file(&path).ok();
    let info = String::from_utf8_lossy(&out.stdout).to_string();
    let pages: Option<u32> = info.lines().find_map(|l| l.strip_prefix("Pages:").and_then(|v| v.trim().parse().ok()));
    assert_eq!(pages, Some(1), "the single file's sheet prints as: {info}");
    s.close().await;
}

/// Which case Chromium is in for the single file opened from disk: its studies run on workers
/// started from the `blob:` URL the file makes (policy `worker-src blob:`), or, where the browser
/// refuses them, on the page in slices with progress and a note said once. Either way a long run
/// shows its progress and cancels, and a short run gives its result.
#[tokio::test(flavor = "multi_thread")]
async fn single_file_runs_studies_on_blob_workers_or_says_it_runs_them_on_the_page() {
    let file = Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join("dist-single").join("hysteron.html");
    let file = file.canonicalize().unwrap_or_else(|e| {
        panic!("{} missing ({e}): run `cargo xtask single-file` (or `cargo xtask test`) first", file.display())
    });
    let html = std::fs::read_to_string(&file).expect("read the single file");
    assert!(html.contains("worker-src blob:"), "the single file's policy allows no blob: workers");
    assert!(html.contains("globalThis.hysteronWorkerUrl"), "the single file carries no worker");
    let s = browser::start_at(format!("file://{}", file.display())).await;
    // A long run: the two-transistor demo costs an Ebers–Moll solve per trial.
    s.add_starter("demo:dust-extractor").await;
    s.type_into("#mc-trials", "70k").await;
    s.wait_stored("r.tolerance.monte_carlo.trials === 70000").await;
    s.wait_for("#mc-run").await.click().await.unwrap();
    let status = s
        .wait_js(
            "progress with the total announced and some trials done",
            "const e = document.querySelector('#mc-status'); return e && +e.dataset.total === 70000 && +e.dataset.done > 0 ? e.textContent : null;",
        )
        .await;
    let status = status.as_str().unwrap_or_default().to_string();
    let compute = s.js("return document.documentElement.dataset.compute || '';").await;
    let note = s.js("const n = document.querySelector('#workers-note'); return n ? n.textContent : '';").await;
    let note = note.as_str().unwrap_or_default().to_string();
    match compute.as_str() {
        Some("workers") => {
            println!("single file from file://: Chromium runs studies on workers from the blob: URL ({status})");
            assert!(status.contains("background"), "{status}");
            assert!(note.is_empty(), "a note about the page although workers run: {note}");
        }
        Some("page") => {
            println!("single file from file://: Chromium refuses the blob: worker; studies run on the page ({status})");
            assert!(status.contains("on this page"), "{status}");
            assert!(note.contains("did not start a background worker"), "the fallback is not said: {note:?}");
        }
        other => panic!("the page says nowhere where studies run (data-compute {other:?}; status {status})"),
    }
    s.wait_for("#mc-cancel").await.click().await.unwrap();
    s.wait_js("the progress bar to go after Cancel", "return !document.querySelector('#mc-progress');").await;

    // A second long run: the note, if any, is not said again.
    s.wait_for("#mc-run").await.click().await.unwrap();
    s.wait_js(
        "the second run's progress",
        "const e = document.querySelector('#mc-status'); return e && +e.dataset.done > 0 ? 1 : null;",
    )
    .await;
    assert_eq!(s.js("return !!document.querySelector('#workers-note');").await, serde_json::Value::Bool(false), "the note is said twice");
    s.wait_for("#mc-cancel").await.click().await.unwrap();
    s.wait_js("the second run's progress bar to go after Cancel", "return !document.querySelector('#mc-progress');").await;

    // A short run completes with its result.
    s.type_into("#mc-trials", "2000").await;
    s.wait_stored("r.tolerance.monte_carlo.trials === 2000").await;
    s.wait_for("#mc-run").await.click().await.unwrap();
    let summary = s.text("#mc-summary").await;
    assert!(summary.starts_with("2000 trials"), "{summary}");

    // A capture chosen from disk is read where the studies run (the worker reads the file itself;
    // the page reads it where workers are refused).
    let dir = std::env::temp_dir().join(format!("hysteron-single-csv-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp folder");
    let csv = dir.join("capture.csv");
    std::fs::write(&csv, hysteron_tests::captures::sine_capture_csv("time_s;volts", 5000, 1e-4)).expect("write the capture");
    s.wait_for("#csv-file").await.send_keys(csv.to_str().unwrap_or_default()).await.expect("choose the capture");
    let status = s.text("#csv-status").await;
    assert!(status.contains("5000 samples"), "import status: {status}");
    let _ = std::fs::remove_dir_all(&dir);
    s.close().await;
}
