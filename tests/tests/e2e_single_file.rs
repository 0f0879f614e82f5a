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
