//! Browser end-to-end: the design flows beyond the first design — synthesis from targets and
//! picking a ranked standard-value alternative, Monte Carlo yield against a spec window, importing
//! a CSV capture and reading the false-edge count, and the part list. The page must show exactly
//! what `core` computes for the record it stored, and the stored record must hold what was typed.

use hysteron_core::record::DesignRecord;
use hysteron_core::search::search;
use hysteron_core::topology::{synthesise, Circuit};
use hysteron_tests::browser::{self, Session};

async fn add_demo(s: &Session, key: &str) {
    s.add_starter(&format!("demo:{key}")).await;
    s.wait_for("#field-rf_ohm, #field-rtop_ohm, #field-r1_ohm, #field-ra_ohm").await;
}

/// The open design's record as the page stored it.
async fn stored_record(s: &Session) -> DesignRecord {
    let v = s
        .js(r#"const ids = JSON.parse(localStorage.getItem('hysteron/index'));
               const open = document.querySelector('#design-list li.open').dataset.id;
               return JSON.parse(localStorage.getItem('hysteron/design/' + open)).record;"#)
        .await;
    DesignRecord::from_value(v).expect("stored record reads back")
}

#[tokio::test(flavor = "multi_thread")]
async fn synthesis_and_a_picked_alternative() {
    let s = browser::start().await;
    add_demo(&s, "lathe-tachometer").await;
    s.wait_for("#find-parts").await.click().await.unwrap();
    // Exact synthesis reaches the demo's targets (2.9 V / 1.7 V, DOMAIN §7 scenario 1).
    let up = s.wait_number("#exact-vt-upper", 2.9, 1e-9).await;
    let lo = s.wait_number("#exact-vt-lower", 1.7, 1e-9).await;
    assert!((up - 2.9).abs() < 1e-9 && (lo - 1.7).abs() < 1e-9, "exact synthesis shows {up} / {lo}");
    let rows = s.js("return document.querySelectorAll('#alternatives tr.alternative').length").await.as_u64().unwrap_or(0);
    assert!(rows >= 5, "expected ranked alternatives, got {rows}");
    // Pick the second alternative; the design must then show that combination's thresholds.
    let record = stored_record(&s).await;
    let targets = record.targets.unwrap();
    let exact = synthesise(&record.circuit, &targets).unwrap();
    let report = search(&exact, targets.thresholds(), &record.search.clone().unwrap_or_default(), &record.checks).unwrap();
    let second = &report.candidates[1];
    s.js("document.querySelectorAll('#alternatives button.use-alternative')[1].click(); return 1;").await;
    let shown = s.wait_number("#vt-upper", second.vt_upper_v, 1e-9).await;
    assert!((shown - second.vt_upper_v).abs() < 1e-9, "picked alternative shows VT+ {shown}, expected {}", second.vt_upper_v);
    let after = stored_record(&s).await;
    let values: Vec<f64> = after.circuit.parameters().iter().filter(|p| p.designator.is_some()).map(|p| p.value).collect();
    let picked: Vec<f64> = second.parts.iter().map(|p| p.value_ohm).collect();
    assert_eq!(values, picked, "stored parts are not the picked combination");
    // Every picked value is an E24 value (IEC 60063 E24 table, the default series).
    for v in picked {
        assert!(hysteron_core::eseries::ESeries::E24.contains(v), "{v} is not an E24 value");
    }
    // The part list shows the same parts.
    let bom = s.js("return [...document.querySelectorAll('#bom tr.bom-line')].map(r => [r.dataset.designator, +r.dataset.value])").await;
    assert_eq!(bom.as_array().map(|a| a.len()), Some(3), "part list: {bom}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn monte_carlo_yield_matches_core_for_the_stored_settings() {
    let s = browser::start().await;
    add_demo(&s, "lathe-tachometer").await;
    let nominal = s.number("#vt-upper").await;
    let (lo, hi) = (nominal - 0.03, nominal + 0.03);
    s.type_into("#spec-vt-upper-min", &format!("{lo:.4}")).await;
    s.type_into("#spec-vt-upper-max", &format!("{hi:.4}")).await;
    s.type_into("#mc-trials", "20k").await;
    s.wait_stored(&format!(
        "r.tolerance.monte_carlo.trials === 20000 && r.tolerance.spec.vt_upper_min_v === {lo:.4} && r.tolerance.spec.vt_upper_max_v === {hi:.4}"
    ))
    .await;
    s.wait_for("#mc-run").await.click().await.unwrap();
    let y = s.wait_for("#mc-yield").await;
    let shown: f64 = y.attr("data-value").await.unwrap().unwrap_or_default().parse().unwrap_or(f64::NAN);
    let record = stored_record(&s).await;
    let settings = record.tolerance.clone().expect("tolerance settings stored");
    assert_eq!(settings.monte_carlo.trials, 20_000);
    assert_eq!(settings.spec.vt_upper_min_v, Some(format!("{lo:.4}").parse().unwrap()));
    let mc = hysteron_core::tolerance::monte_carlo(&record.circuit, &settings).unwrap();
    let expected = mc.spec_yield.unwrap().fraction;
    assert_eq!(shown, expected, "page yield {shown} differs from core {expected} (same seed, same inputs)");
    assert!(shown > 0.05 && shown < 0.999, "a ±30 mV window around nominal should cut some boards: {shown}");
    // Histograms are drawn.
    let inked = s.js("const c = document.querySelector('#hist-vt-upper'); const d = c.getContext('2d').getImageData(0,0,c.width,c.height).data; let n=0; for (let i=0;i<d.length;i+=4) if (d[i]<120 && d[i+2]>100) n++; return n;").await;
    assert!(inked.as_u64().unwrap_or(0) > 500, "VT+ histogram not drawn");
    s.close().await;
}

/// A standard normal deviate from two uniforms (Box–Muller), for the test's own fixture.
fn gauss(state: &mut u64) -> f64 {
    let mut u = || {
        // Knuth's MMIX linear congruential generator (from memory: a = 6364136223846793005, c = 1442695040888963407).
        *state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        ((*state >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    let (a, b) = (u(), u());
    (-2.0 * a.ln()).sqrt() * (2.0 * std::f64::consts::PI * b).cos()
}

#[tokio::test(flavor = "multi_thread")]
async fn imported_capture_gives_the_edges_and_the_baseline_chatters() {
    // The fixture: 1 s at 10 kHz of a 5 Hz sine, 2.3 V ± 1.5 V, with 20 mV RMS noise — like a
    // bench oscilloscope's CSV export (semicolon separated, with a header line).
    let dir = std::env::temp_dir().join(format!("hysteron-csv-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("capture.csv");
    let mut text = String::from("time_s;volts\n");
    let mut st = 12345u64;
    for i in 0..10_000 {
        let t = i as f64 * 1e-4;
        let v = 2.3 + 1.5 * (2.0 * std::f64::consts::PI * 5.0 * t).sin() + 0.02 * gauss(&mut st);
        text.push_str(&format!("{t};{v}\n"));
    }
    std::fs::write(&path, text).unwrap();

    let s = browser::start().await;
    add_demo(&s, "lathe-tachometer").await;
    // The demo already describes a generated signal; the import replaces it as the source.
    let input = s.wait_for("#csv-file").await;
    input.send_keys(path.to_str().unwrap()).await.expect("choose the file");
    let status = s.text("#csv-status").await;
    assert!(status.contains("10000 samples"), "import status: {status}");
    s.wait_for("#signal-run").await.click().await.unwrap();
    // Five cycles cross VT+ five times and VT− five times; the band (about 1.2 V) is far wider
    // than the noise's peak-to-peak (about 0.13 V), so there are exactly ten edges (common practice:
    // hysteresis above the noise peak-to-peak gives no false edges).
    let edges = s.wait_number("#edges-design", 10.0, 0.0).await;
    assert_eq!(edges, 10.0);
    // The plain comparator at the band centre sees 20 mV RMS noise on a crossing slope of about
    // 47 V/s, i.e. only about 0.5 mV per sample: it chatters.
    let base_false = s.number("#false-edges-baseline").await;
    assert!(base_false > 0.0, "baseline shows {base_false} false edges");
    let _ = std::fs::remove_dir_all(&dir);
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn malformed_capture_is_reported_by_line_number() {
    let dir = std::env::temp_dir().join(format!("hysteron-badcsv-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("bad.csv");
    std::fs::write(&path, "t,v\n0,1\n0.001,1.1\n0.002,oops\n0.003,1.2\n").unwrap();
    let s = browser::start().await;
    s.wait_for("#csv-file").await.send_keys(path.to_str().unwrap()).await.unwrap();
    let err = s.text("#csv-error").await;
    assert!(err.contains("line 4"), "no line number in the message: {err}");
    // The page is still alive and computing.
    assert!(s.number("#vt-upper").await.is_finite());
    let _ = std::fs::remove_dir_all(&dir);
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn generated_signal_test_matches_core_and_shows_the_baseline_chattering() {
    let s = browser::start().await;
    add_demo(&s, "lathe-tachometer").await;
    s.wait_for("#signal-run").await.click().await.unwrap();
    let design_false = s.wait_for("#false-edges-design").await.attr("data-value").await.unwrap().unwrap_or_default();
    let base_false: f64 = s.number("#false-edges-baseline").await;
    let record = stored_record(&s).await;
    let rep = hysteron_core::signal::report::evaluate_record_signal(&record.circuit, record.signal.as_ref().unwrap()).unwrap();
    assert_eq!(design_false.parse::<f64>().unwrap(), rep.design.comparison.unwrap().false_edges as f64);
    assert_eq!(base_false, rep.baseline.comparison.unwrap().false_edges as f64);
    // The demo's band (about 1.2 V) is far wider than its noise; the plain comparator is not.
    assert_eq!(design_false, "0");
    assert!(base_false > 10.0, "baseline false edges {base_false}");
    // The noise sweep adds a table of levels.
    s.wait_for("#signal-sweep").await.click().await.unwrap();
    // The sweep runs on a compute worker: wait for its table.
    let rows = s.wait_js("the noise sweep's table (8 levels or more)", "const n = document.querySelectorAll('#sweep tbody tr').length; return n >= 8 ? n : null;").await;
    assert!(rows.as_u64().unwrap_or(0) >= 8, "sweep rows: {rows}");
    s.close().await;
}
