//! Browser end-to-end: the first design works in the real page — typing parts in engineering
//! notation and the RKM code gives the right thresholds, bad input is marked at its field, the
//! transfer curve is drawn, and the design survives a reload.

use hysteron_tests::browser;

/// Rail-to-rail inverting Schmitt on a single supply (DOMAIN §1a; Sedra & Smith, bistable section,
/// from memory): VT+ = VCC·Rb/(Rb + Ra‖Rf), VT− = VCC·(Rb‖Rf)/(Ra + Rb‖Rf).
fn closed_form(vcc: f64, ra: f64, rb: f64, rf: f64) -> (f64, f64) {
    let par = |a: f64, b: f64| a * b / (a + b);
    (vcc * rb / (rb + par(ra, rf)), vcc * par(rb, rf) / (ra + par(rb, rf)))
}

#[tokio::test(flavor = "multi_thread")]
async fn typed_parts_give_thresholds_and_persist() {
    let s = browser::start().await;
    // A blank notebook opens one design of the default topology.
    s.wait_for("#field-ra_ohm").await;
    s.type_into("#field-supply_v", "5").await;
    s.type_into("#field-ra_ohm", "4k7").await; // RKM code (IEC 60062)
    s.type_into("#field-rb_ohm", "10k").await;
    s.type_into("#field-rf_ohm", "22.0k").await;
    let (up, lo) = closed_form(5.0, 4.7e3, 10e3, 22e3);
    let got_up = s.wait_number("#vt-upper", up, 1e-9).await;
    let got_lo = s.wait_number("#vt-lower", lo, 1e-9).await;
    assert!((got_up - up).abs() < 1e-9, "VT+ shown {got_up}, expected {up}");
    assert!((got_lo - lo).abs() < 1e-9, "VT− shown {got_lo}, expected {lo}");
    let width = s.number("#hysteresis").await;
    assert!((width - (up - lo)).abs() < 1e-9);

    // The transfer curve is drawn: the canvas has coloured pixels of both branches.
    let coloured = s
        .js(r#"const c = document.querySelector('#transfer-plot');
               const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
               let rising = 0, falling = 0;
               for (let i = 0; i < d.length; i += 4) {
                 // Hysteron's palette (app/src/plot.rs colours): teal #00756f rising, madder #b23a5b falling.
                 if (d[i] < 50 && d[i+1] > 95 && d[i+1] < 140 && d[i+2] > 90 && d[i+2] < 135) rising++;
                 if (d[i] > 155 && d[i+1] < 90 && d[i+2] > 70 && d[i+2] < 115) falling++;
               }
               return [rising, falling];"#)
        .await;
    let rising = coloured[0].as_u64().unwrap_or(0);
    let falling = coloured[1].as_u64().unwrap_or(0);
    assert!(rising > 200 && falling > 200, "transfer curve not drawn: {rising} teal (rising), {falling} madder (falling) pixels");

    // Editing a part redraws the curve: the VT+ line moves, so the picture changes.
    let picture = r#"const c = document.querySelector('#transfer-plot');
        const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;
        let h = 0; for (let i = 0; i < d.length; i += 16) h = (h * 31 + d[i] + 7 * d[i + 2]) >>> 0; return h;"#;
    let before = s.js(picture).await;
    s.type_into("#field-rf_ohm", "47k").await;
    let (up47, _) = closed_form(5.0, 4.7e3, 10e3, 47e3);
    s.wait_number("#vt-upper", up47, 1e-9).await;
    let after = s.js(picture).await;
    assert_ne!(before, after, "the transfer curve did not change after an edit");
    s.type_into("#field-rf_ohm", "22k").await;
    s.wait_number("#vt-upper", up, 1e-9).await;

    // Junk is marked at the field and does not change the results.
    s.type_into("#field-rf_ohm", "x22").await; // invalid from the first key
    let msg = s.text("#field-rf_ohm-error").await;
    assert!(!msg.is_empty(), "no message at the field for bad input");
    let unchanged = s.number("#vt-upper").await;
    let field = s.js("return document.querySelector('#field-rf_ohm').value").await;
    assert!((unchanged - up).abs() < 1e-9, "bad input changed VT+ to {unchanged} (field holds {field}, message {msg:?})");

    // The design persisted: after a reload the same thresholds come back from local storage.
    s.type_into("#field-rf_ohm", "22k").await;
    s.wait_number("#vt-upper", up, 1e-9).await;
    s.reload().await;
    let after = s.wait_number("#vt-upper", up, 1e-9).await;
    assert!((after - up).abs() < 1e-9, "after reload VT+ is {after}, expected {up}");
    let stored = s.js("return Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/')).length").await;
    assert_eq!(stored.as_u64(), Some(1));
    s.close().await;
}

/// A test that panics before closing its session must not leave its browser running: a leftover
/// Chromium takes a core from every later test (and skews `browser_timing`).
#[tokio::test(flavor = "multi_thread")]
async fn a_test_that_fails_leaves_no_browser_running() {
    let (tell, told) = tokio::sync::oneshot::channel();
    let failed = tokio::spawn(async move {
        let s = browser::start().await;
        tell.send(s.profile_dir().to_path_buf()).ok();
        panic!("a test failing before it closes its session");
    })
    .await;
    assert!(failed.is_err_and(|e| e.is_panic()), "the failing test did not fail");
    let profile = told.await.expect("the browser's profile folder");
    let running = std::process::Command::new("pgrep")
        .args(["-f"])
        .arg(format!("user-data-dir={}( |$)", profile.display()))
        .output()
        .expect("pgrep (procps)");
    let pids = String::from_utf8_lossy(&running.stdout).trim().to_string();
    assert!(pids.is_empty(), "browser processes still running on {}: {pids}", profile.display());
    assert!(!profile.exists(), "the profile folder {} is still there", profile.display());
}
