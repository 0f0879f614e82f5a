//! Browser end-to-end: the single-file page (`cargo xtask single-file` → `dist-single/hysteron.html`)
//! opened straight from disk (a file:// URL, no server): it starts under its own strict policy, an
//! edit is kept in local storage, and a reload brings the design back.

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
    s.close().await;
}
