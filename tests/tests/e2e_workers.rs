//! Browser end-to-end: long studies run on the compute workers (`app/src/jobs.rs`, `worker/`).
//! A long Monte Carlo shows its progress (announced total before the work), Cancel stops it, and a
//! run spread over `navigator.hardwareConcurrency` workers shows exactly what a single native run
//! of `core` gives for the stored record and seed. A 10 M-sample signal test runs while a long-task
//! observer (PerformanceObserver, entry type "longtask": main-thread tasks over 50 ms) watches the
//! page's thread. Figures are printed for the record.

use hysteron_core::record::DesignRecord;
use hysteron_tests::browser::{self, Session};
use std::time::Duration;

async fn stored_record(s: &Session) -> DesignRecord {
    let v = s
        .js(r#"const open = document.querySelector('#design-list li.open').dataset.id;
               return JSON.parse(localStorage.getItem('hysteron/design/' + open)).record;"#)
        .await;
    DesignRecord::from_value(v).expect("stored record reads back")
}

const OBSERVE_LONG_TASKS: &str = r#"window.__long = [];
    new PerformanceObserver(l => { for (const e of l.getEntries()) window.__long.push(e.duration); })
      .observe({ type: 'longtask' });
    return PerformanceObserver.supportedEntryTypes.includes('longtask');"#;

#[tokio::test(flavor = "multi_thread")]
async fn monte_carlo_on_workers_shows_progress_cancels_and_equals_one_run() {
    let s = browser::start().await;
    let workers = s.js("return navigator.hardwareConcurrency;").await.as_u64().unwrap_or(1);

    // A long run: progress with the total announced, then Cancel. The two-transistor demo with the
    // Ebers–Moll model costs a solve per trial, so 70,000 trials (under the time limit the core
    // sets for this circuit, monte_carlo::MONTE_CARLO_TIME_LIMIT_S) last far longer than the test
    // takes to cancel it.
    s.add_starter("demo:dust-extractor").await;
    s.type_into("#mc-trials", "70k").await;
    s.wait_stored("r.tolerance.monte_carlo.trials === 70000").await;
    assert_eq!(s.js(OBSERVE_LONG_TASKS).await, serde_json::Value::Bool(true), "long-task entries unsupported");
    s.wait_for("#mc-run").await.click().await.unwrap();
    let status = s
        .wait_js(
            "progress with the total announced and some trials done",
            "const e = document.querySelector('#mc-status'); return e && +e.dataset.total === 70000 && +e.dataset.done > 0 ? e.textContent : null;",
        )
        .await;
    let status = status.as_str().unwrap_or_default().to_string();
    if workers > 1 {
        assert!(status.contains(&format!("on {} background workers", workers.min(8))), "{status}");
    }
    s.wait_for("#mc-cancel").await.click().await.unwrap();
    s.wait_js("the progress bar to go after Cancel", "return !document.querySelector('#mc-progress');").await;
    // Cancelled means stopped: no result arrives afterwards.
    tokio::time::sleep(Duration::from_millis(1500)).await;
    assert_eq!(s.js("return !!document.querySelector('#mc-summary');").await, serde_json::Value::Bool(false), "a cancelled run finished");

    // A complete run on the workers equals one native run for the same record and seed.
    s.add_starter("demo:lathe-tachometer").await;
    let nominal = s.number("#vt-upper").await;
    let (lo, hi) = (nominal - 0.03, nominal + 0.03);
    s.type_into("#spec-vt-upper-min", &format!("{lo:.4}")).await;
    s.type_into("#spec-vt-upper-max", &format!("{hi:.4}")).await;
    s.type_into("#mc-trials", "100k").await;
    s.wait_stored("r.tolerance.monte_carlo.trials === 100000").await;
    s.wait_for("#mc-run").await.click().await.unwrap();
    let y = s.wait_for("#mc-yield").await;
    let shown: f64 = y.attr("data-value").await.unwrap().unwrap_or_default().parse().unwrap_or(f64::NAN);
    let summary = s.text("#mc-summary").await;
    let record = stored_record(&s).await;
    let settings = record.tolerance.clone().expect("tolerance settings stored");
    let mc = hysteron_core::tolerance::monte_carlo(&record.circuit, &settings).unwrap();
    assert_eq!(shown, mc.spec_yield.as_ref().unwrap().fraction, "yield on {workers} workers differs from one native run");
    let expected_tail = format!(
        "VT+ {:.4} ± {:.4} V, VT− {:.4} ± {:.4} V (mean ± standard deviation); 95 % of boards: VT+ {:.4}…{:.4} V, VT− {:.4}…{:.4} V.",
        mc.vt_upper.mean_v,
        mc.vt_upper.standard_deviation_v,
        mc.vt_lower.mean_v,
        mc.vt_lower.standard_deviation_v,
        mc.vt_upper.interval_95_low_v,
        mc.vt_upper.interval_95_high_v,
        mc.vt_lower.interval_95_low_v,
        mc.vt_lower.interval_95_high_v
    );
    assert!(summary.starts_with(&format!("100000 trials ({} rejected) in ", mc.rejected_trials)), "{summary}");
    assert!(summary.ends_with(&expected_tail), "page: {summary}\ncore: {expected_tail}");
    let mc_ms: f64 = summary.split(" in ").nth(1).and_then(|x| x.split(" ms").next()).and_then(|x| x.trim().parse().ok()).unwrap_or(f64::NAN);
    let long: Vec<f64> = serde_json::from_value(s.js("return window.__long;").await).unwrap_or_default();
    println!(
        "workers: Monte Carlo 100k on {workers} workers {mc_ms:.0} ms wall; long tasks during the Monte Carlo runs: {} (longest {:.0} ms)",
        long.len(),
        long.iter().cloned().fold(0.0, f64::max)
    );
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn ten_million_sample_signal_test_leaves_the_page_thread_free() {
    let s = browser::start().await;
    s.add_starter("demo:lathe-tachometer").await;
    s.type_into("#sig-rate", "10M").await;
    s.type_into("#sig-duration", "1").await;
    s.wait_stored("r.signal.sample_rate_hz === 1e7 && r.signal.duration_s === 1").await;

    // Cancel stops a running signal test.
    s.wait_for("#signal-run").await.click().await.unwrap();
    s.wait_for("#signal-progress").await;
    s.wait_for("#signal-cancel").await.click().await.unwrap();
    s.wait_js("the signal progress to go after Cancel", "return !document.querySelector('#signal-progress');").await;
    tokio::time::sleep(Duration::from_millis(300)).await;
    assert_eq!(s.js("return !!document.querySelector('#signal-time');").await, serde_json::Value::Bool(false), "a cancelled signal test finished");

    // The whole 10 M-sample test, watched by the long-task observer.
    assert_eq!(s.js(OBSERVE_LONG_TASKS).await, serde_json::Value::Bool(true), "long-task entries unsupported");
    s.js("window.__t0 = performance.now(); document.querySelector('#signal-run').click(); return 0;").await;
    s.wait_for("#signal-progress").await;
    let ms = browser::wait_until("the 10 M-sample signal test to finish", Duration::from_secs(120), || async {
        let v = s.js("const e = document.querySelector('#signal-time'); return e ? +e.dataset.ms : null;").await;
        v.as_f64().ok_or(v.to_string())
    })
    .await;
    // Let the result's drawing run before reading the observer.
    s.js("return new Promise(r => requestAnimationFrame(() => setTimeout(() => r(0), 200)));").await;
    let text = s.text("#signal-time").await;
    assert!(text.starts_with("10000000 samples"), "{text}");
    let long: Vec<f64> = serde_json::from_value(s.js("return window.__long;").await).unwrap_or_default();
    let longest = long.iter().cloned().fold(0.0, f64::max);

    // The counts shown are core's for the stored record.
    let record = stored_record(&s).await;
    let design = hysteron_core::signal::trigger::TriggerDesign::from_circuit(&record.circuit).unwrap();
    let settings = record.signal.clone().expect("signal settings stored");
    let rep = hysteron_core::signal::report::evaluate_signal(&settings, &design, None).unwrap();
    let shown = |css: &'static str| {
        let s = &s;
        async move { s.wait_for(css).await.attr("data-value").await.unwrap().unwrap_or_default() }
    };
    assert_eq!(shown("#edges-design").await, rep.design.outcome.edges.to_string());
    assert_eq!(shown("#edges-baseline").await, rep.baseline.outcome.edges.to_string());
    assert_eq!(
        shown("#false-edges-design").await,
        rep.design.comparison.map(|c| (c.false_edges as f64).to_string()).unwrap_or_default()
    );
    println!(
        "workers: 10M-sample signal test {ms:.0} ms wall; main-thread long tasks (> 50 ms) during it: {} {:?} (longest {longest:.0} ms)",
        long.len(),
        long
    );
    // The 50 ms target is a performance figure (issue 15): measured and printed here, judged in the
    // timed browser runs on a quiet machine, not asserted on a loaded one. A freeze of the page
    // (one task of a second or more, as the study on the page's own thread used to cause) fails.
    assert!(longest < 1000.0, "the page froze for {longest:.0} ms during the 10 M-sample signal test: {long:?}");
    s.close().await;
}

/// Where the browser refuses workers (here: `Worker` throws, as a locked-down browser does), a CSV
/// import still reads the whole file: its text is copied into the page a slice per task and parsed
/// on the page in slices, giving as many samples as a native `core` parse of the same text; the page
/// says where studies run. The long tasks meanwhile are printed for the record.
#[tokio::test(flavor = "multi_thread")]
async fn refused_workers_import_a_large_file_on_the_page_in_slices() {
    // 300,000 rows (about 5 MB of text, three of the page's text slices), with a character
    // outside the Basic Multilingual Plane in the header, so slice boundaries fall inside the file
    // and no character may be cut.
    let dir = std::env::temp_dir().join(format!("hysteron-refused-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("capture.csv");
    let text = hysteron_tests::captures::sine_capture_csv("time_s;volts \u{1F50B}", 300_000, 1e-5);
    std::fs::write(&path, &text).unwrap();
    let native = hysteron_core::signal::csv::parse_csv(&text, &hysteron_core::signal::csv::CsvOptions::default()).expect("native parse");

    let s = browser::start().await;
    s.devtools(
        "Page.addScriptToEvaluateOnNewDocument",
        serde_json::json!({"source": "window.Worker = function () { throw new DOMException('workers are blocked here', 'SecurityError'); };"}),
    )
    .await;
    s.reload().await;
    s.add_starter("demo:lathe-tachometer").await;
    s.js(OBSERVE_LONG_TASKS).await;
    s.wait_for("#csv-file").await.send_keys(path.to_str().unwrap()).await.expect("choose the file");
    let status = s.wait_text("#csv-status", "the import's result", |t| t.contains("samples")).await;
    assert!(status.contains(&format!("Read {} samples", native.volts.len())), "{status}");
    assert_eq!(s.js("return document.documentElement.dataset.compute || '';").await, serde_json::Value::from("page"));
    let long: Vec<f64> = serde_json::from_value(s.js("return window.__long;").await).unwrap_or_default();
    println!("refused workers: 300,000-row import on the page; main-thread tasks over 50 ms: {long:?}");
    let _ = std::fs::remove_dir_all(&dir);
    s.close().await;
}
