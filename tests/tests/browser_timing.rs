//! Timed runs in the real browser (headless Chromium), printed for the record — performance targets
//! live here and in the criterion benchmarks, never in assertions on time. Each run also checks that
//! the work it timed really happened.
//!
//! Figures printed: page load to the first module mounted (the notebook as last saved shown) and to
//! the editor arrived ("hysteron-editable": usable), input event to updated results (p50/p95 over 60 edits,
//! analysis plus transfer-curve redraw), Monte Carlo 100,000 trials (five runs, with the last one's
//! job timeline: parts sent, begun and ended on the workers, read back, merged), the E96 three-decade
//! search (three runs, the same),
//! a 1,000,000-sample signal pass, a 10,000,000-sample signal test watched by a long-task observer
//! (PerformanceObserver "longtask": main-thread tasks over 50 ms; count, longest and wall time),
//! the noise sweep of the 1 M-sample signal, a 1,000,000-row CSV import and the opening of every
//! demo (both watched by the same observer; for the opening, also the click's own task), the
//! page mounted and editable again after a reload, and a first visit with the cache and storage
//! emptied (mounted, first contentful paint, editable, schematic shown); and the sizes of the page's
//! first module, of the compute worker's and of the pieces fetched after the first paint, raw and
//! compressed.
//!
//! The host's speed drifts (a virtual machine's neighbours: the same native Monte Carlo benchmark
//! measured 8.8 ms and 11.6 ms an hour apart), so the run also times the same Monte Carlo natively
//! in this test build (one thread; the math crate at opt-level 3 but with the test profile's debug
//! assertions and overflow checks, so slower than a release build), on the record the page stored,
//! and prints the browser's wall time as a ratio of it: a yardstick for comparing runs made at
//! different times, not the WebAssembly-to-native ratio.

use hysteron_tests::browser;

fn percentile(sorted: &[f64], p: f64) -> f64 {
    let i = ((sorted.len() as f64 - 1.0) * p).round() as usize;
    sorted[i.min(sorted.len() - 1)]
}

/// The same Monte Carlo run natively, on one thread, on the record the page stored (best of three),
/// in milliseconds; checks that it gives the yield the page shows.
async fn native_monte_carlo_ms(s: &browser::Session) -> f64 {
    let v = s
        .js(r#"const open = document.querySelector('#design-list li.open').dataset.id;
               return JSON.parse(localStorage.getItem('hysteron/design/' + open)).record;"#)
        .await;
    let record = hysteron_core::record::DesignRecord::from_value(v).expect("stored record reads back");
    let settings = record.tolerance.clone().unwrap_or_default();
    assert_eq!(settings.monte_carlo.trials, 100_000);
    let mut best = f64::INFINITY;
    for _ in 0..3 {
        let t0 = std::time::Instant::now();
        let r = hysteron_core::tolerance::monte_carlo::monte_carlo(&record.circuit, &settings).expect("native run");
        best = best.min(t0.elapsed().as_secs_f64() * 1e3);
        assert_eq!(r.trials, 100_000);
    }
    best
}

/// Clicks `button` `n` times, each time after the last run has finished: waits for the job's end
/// (`<html data-job-timeline>`, removed before each click) and for `summary`'s text to change
/// (a text identical to the last, to the millisecond, is accepted after half a second). Returns the
/// summaries and the last run's job timeline.
async fn repeated_runs(s: &browser::Session, button: &str, summary: &str, n: usize) -> (Vec<String>, serde_json::Value) {
    let read = format!("const e = document.querySelector('{summary}'); return e ? e.textContent : '';");
    let (mut out, mut timeline) = (Vec::new(), serde_json::Value::Null);
    for _ in 0..n {
        s.js("document.documentElement.removeAttribute('data-job-timeline');").await;
        let before = s.js(&read).await;
        s.wait_for(button).await.click().await.unwrap();
        timeline = s.wait_js("the run to finish", "return document.documentElement.dataset.jobTimeline || null;").await;
        let mut now = s.js(&read).await;
        for _ in 0..20 {
            if now != before {
                break;
            }
            tokio::time::sleep(std::time::Duration::from_millis(25)).await;
            now = s.js(&read).await;
        }
        out.push(now.as_str().unwrap_or_default().to_string());
        tokio::time::sleep(std::time::Duration::from_millis(400)).await;
    }
    (out, timeline)
}

/// A first visit, `n` times, with the browser already running: the page's origin's storage (the
/// service worker and its cache included) and the HTTP cache are emptied, then the page is opened.
/// Returns the medians of the mount mark, of the first contentful paint, of the editor's arrival
/// ([`editable_at`]) and of the moment the schematic (the first section of the piece fetched after the first paint) enters the page, ms
/// after navigation. (The run's first navigation also pays for starting the browser's own processes.)
async fn cold_loads(s: &browser::Session, n: usize) -> (f64, f64, f64, f64) {
    let origin = s.base.trim_end_matches('/').to_string();
    // Notes when the schematic enters the page, on every page opened from now on.
    s.devtools(
        "Page.addScriptToEvaluateOnNewDocument",
        serde_json::json!({"source": "new MutationObserver((_, o) => { if (document.getElementById('schematic')) { window.__schematicAt = performance.now(); o.disconnect(); } }).observe(document, {childList: true, subtree: true});"}),
    )
    .await;
    let (mut mounted, mut painted, mut editable, mut sections) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for _ in 0..n {
        s.devtools("Storage.clearDataForOrigin", serde_json::json!({"origin": origin, "storageTypes": "all"})).await;
        s.devtools("Network.enable", serde_json::json!({})).await;
        s.devtools("Network.clearBrowserCache", serde_json::json!({})).await;
        s.client.goto("about:blank").await.expect("leave the page");
        s.client.goto(&s.base).await.expect("open the page");
        let v = browser::wait_until("the page to mount and paint", std::time::Duration::from_secs(20), || async {
            let v = s
                .js("const m = performance.getEntriesByName('hysteron-mounted')[0]; const p = performance.getEntriesByName('first-contentful-paint')[0]; \
                     return m && p ? [m.startTime, p.startTime] : null;")
                .await;
            if v.is_array() { Ok(v) } else { Err(v.to_string()) }
        })
        .await;
        mounted.push(v[0].as_f64().unwrap_or(f64::NAN));
        painted.push(v[1].as_f64().unwrap_or(f64::NAN));
        editable.push(editable_at(s).await);
        let at = browser::wait_until("the schematic to arrive", std::time::Duration::from_secs(20), || async {
            let v = s.js("return window.__schematicAt ?? null;").await;
            v.as_f64().ok_or_else(|| v.to_string())
        })
        .await;
        sections.push(at);
    }
    for v in [&mut mounted, &mut painted, &mut editable, &mut sections] {
        v.sort_by(|a, b| a.total_cmp(b));
    }
    (percentile(&mounted, 0.5), percentile(&painted, 0.5), percentile(&editable, 0.5), percentile(&sections, 0.5))
}

/// When the editor of the page now open had arrived and was in the page ("hysteron-editable",
/// marked by `view::App`), milliseconds after navigation: the page is usable from then on.
async fn editable_at(s: &browser::Session) -> f64 {
    browser::wait_until("the editor to arrive", std::time::Duration::from_secs(20), || async {
        let v = s.js("const m = performance.getEntriesByName('hysteron-editable')[0]; return m ? m.startTime : null;").await;
        v.as_f64().ok_or_else(|| v.to_string())
    })
    .await
}

/// The name prefixes of the files the editor's piece loads (`hysteron-split_editor-` and the
/// shared chunks the split loader lists for it, `__wasm_split_load_editor`'s dependencies).
fn editor_files() -> Vec<String> {
    let dist = hysteron_tests::server::dist_dir();
    let loader = std::fs::read_dir(&dist)
        .expect("list dist/")
        .flatten()
        .find(|e| e.file_name().to_string_lossy().starts_with("hysteron-split-"))
        .and_then(|e| std::fs::read_to_string(e.path()).ok())
        .unwrap_or_default();
    // `export const __wasm_split_load_editor = wrapAsyncCb(makeLoad(() => { … }, [__chunk_4, …]));`
    let deps = loader
        .split("__wasm_split_load_editor")
        .nth(1)
        .and_then(|rest| rest.find("]));").map(|end| &rest[..end]))
        .and_then(|list| list.rsplit_once('['))
        .map(|(_, d)| d)
        .unwrap_or("");
    let mut out = vec!["hysteron-split_editor-".to_string()];
    out.extend(deps.split(',').filter_map(|d| d.trim().strip_prefix("__chunk_")).map(|n| format!("hysteron-chunk_{n}-")));
    out
}

/// Raw and compressed sizes of the built page module, the compute-worker module and each piece of
/// the page loaded after the first paint (DEVELOPERS.md, "Loading in pieces"), bytes: DEFLATE at
/// level 9 (miniz_oxide) plus gzip's 18 bytes of framing, within about 1 % of `gzip -9`.
fn module_sizes() -> Vec<(String, usize, usize)> {
    let dist = hysteron_tests::server::dist_dir();
    let mut out = Vec::new();
    for entry in std::fs::read_dir(&dist).expect("list dist/").flatten() {
        let name = entry.file_name().to_string_lossy().to_string();
        if name.ends_with(".wasm") {
            let bytes = std::fs::read(entry.path()).expect("read a module");
            let packed = miniz_oxide::deflate::compress_to_vec(&bytes, 9).len() + 18;
            out.push((name, bytes.len(), packed));
        }
    }
    out.sort();
    out
}

#[tokio::test(flavor = "multi_thread")]
async fn timed_runs_in_the_browser() {
    let s = browser::start().await;
    let mounted = s.js("const m = performance.getEntriesByName('hysteron-mounted')[0]; return m ? m.startTime : -1;").await;
    let mounted_ms = mounted.as_f64().unwrap_or(-1.0);
    assert!(mounted_ms > 0.0, "the page did not mark its mount");
    let editable_ms = editable_at(&s).await;

    // The lathe tachometer demo: three resistors, targets, a spec window and a signal.
    s.add_starter("demo:lathe-tachometer").await;

    // Input event → results updated (all effects, including the canvas redraw, have run).
    s.wait_for("#field-rf_ohm").await;
    let times = s
        .client
        .execute_async(
            r#"const done = arguments[arguments.length - 1];
               const el = document.querySelector('#field-rf_ohm');
               const out = document.querySelector('#vt-upper');
               const next = () => new Promise(r => { const c = new MessageChannel(); c.port1.onmessage = () => r(); c.port2.postMessage(0); });
               (async () => {
                 const t = [];
                 for (let i = 0; i < 60; i++) {
                   const before = out.dataset.value;
                   const t0 = performance.now();
                   el.value = (i % 2 ? '47k' : '22k');
                   el.dispatchEvent(new Event('input', { bubbles: true }));
                   await next();
                   const t1 = performance.now();
                   if (out.dataset.value === before) { t.push(-1); } else { t.push(t1 - t0); }
                   await new Promise(r => setTimeout(r, 20));
                 }
                 done(t);
               })();"#,
            vec![],
        )
        .await
        .expect("latency script");
    let mut lat: Vec<f64> = times.as_array().unwrap().iter().map(|v| v.as_f64().unwrap_or(-1.0)).collect();
    assert!(lat.iter().all(|&x| x >= 0.0), "some edits did not update the results within one task: {lat:?}");
    lat.sort_by(|a, b| a.total_cmp(b));
    let (p50, p95) = (percentile(&lat, 0.5), percentile(&lat, 0.95));

    // Monte Carlo, 100,000 trials, in slices.
    s.type_into("#mc-trials", "100k").await;
    s.wait_stored("r.tolerance.monte_carlo.trials === 100000").await;
    // Five runs (the host's speed varies from run to run): each run's wall time as the page shows
    // it, and the job timeline of the last (`<html data-job-timeline>`, app/src/timeline.rs).
    let (summaries, timeline) = repeated_runs(&s, "#mc-run", "#mc-summary", 5).await;
    let mut mc_runs = Vec::new();
    for summary in &summaries {
        assert!(summary.starts_with("100000 trials"), "{summary}");
        let ms: f64 = summary.split(" in ").nth(1).and_then(|x| x.split(" ms").next()).and_then(|x| x.trim().parse().ok()).unwrap_or(f64::NAN);
        mc_runs.push(ms);
    }
    let mut sorted_mc = mc_runs.clone();
    sorted_mc.sort_by(|a, b| a.total_cmp(b));
    let mc_ms = percentile(&sorted_mc, 0.5);
    println!("browser timing: Monte Carlo 100k, five runs: {mc_runs:?} ms wall; the last run's job timeline (ms): {timeline}");
    let native_mc_ms = native_monte_carlo_ms(&s).await;

    // E96 over 1 kΩ–1 MΩ for the three-resistor inverting form (the default range).
    s.wait_for("#search-series").await.select_by_value("E96").await.unwrap();
    let (notes, search_timeline) = repeated_runs(&s, "#find-parts", "#search-summary", 3).await;
    let mut search_runs = Vec::new();
    for note in &notes {
        assert!(note.contains("E96"), "{note}");
        search_runs.push(note.rsplit('(').next().and_then(|x| x.split(" ms").next()).and_then(|x| x.trim().parse::<f64>().ok()).unwrap_or(f64::NAN));
    }
    println!("browser timing: E96 search, three runs: {search_runs:?} ms; the last run's job timeline (ms): {search_timeline}");
    let mut sorted_search = search_runs.clone();
    sorted_search.sort_by(|a, b| a.total_cmp(b));
    let search_ms = percentile(&sorted_search, 0.5);

    // A 1,000,000-sample signal pass (generation, noise, design and baseline triggers).
    s.type_into("#sig-rate", "1M").await;
    s.type_into("#sig-duration", "1").await;
    s.wait_stored("r.signal.sample_rate_hz === 1e6 && r.signal.duration_s === 1").await;
    s.wait_for("#signal-run").await.click().await.unwrap();
    let el = s.wait_for("#signal-time").await;
    let signal_ms: f64 = el.attr("data-ms").await.unwrap().unwrap_or_default().parse().unwrap_or(f64::NAN);
    let text = el.text().await.unwrap_or_default();
    assert!(text.starts_with("1000000 samples"), "{text}");

    // A 10,000,000-sample signal test, watched by a long-task observer.
    s.type_into("#sig-rate", "10M").await;
    s.wait_stored("r.signal.sample_rate_hz === 1e7 && r.signal.duration_s === 1").await;
    let supported = s
        .js(r#"window.__long = [];
               new PerformanceObserver(l => { for (const e of l.getEntries()) window.__long.push(e.duration); })
                 .observe({ type: 'longtask' });
               return PerformanceObserver.supportedEntryTypes.includes('longtask');"#)
        .await;
    assert_eq!(supported, serde_json::Value::Bool(true), "long-task entries unsupported");
    s.js("window.__t0 = performance.now(); document.querySelector('#signal-run').click(); return 0;").await;
    let wall_ms = browser::wait_until("the 10 M-sample signal test to finish", std::time::Duration::from_secs(120), || async {
        let v = s.js("const e = document.querySelector('#signal-time'); return e && e.textContent.startsWith('10000000 samples') && !document.querySelector('#signal-progress') ? performance.now() - window.__t0 : null;").await;
        v.as_f64().ok_or(v.to_string())
    })
    .await;
    let ten_m_ms: f64 = s.wait_for("#signal-time").await.attr("data-ms").await.unwrap().unwrap_or_default().parse().unwrap_or(f64::NAN);
    let ten_m_timeline = s.js("return document.documentElement.dataset.jobTimeline || null;").await;
    println!("browser timing: the 10M-sample signal test's job timeline (ms): {ten_m_timeline}");
    // Let the result's drawing run before reading the observer.
    s.js("return new Promise(r => requestAnimationFrame(() => setTimeout(() => r(0), 200)));").await;
    let long: Vec<f64> = serde_json::from_value(s.js("return window.__long;").await).unwrap_or_default();
    let longest = long.iter().cloned().fold(0.0, f64::max);

    // The noise sweep of the 1 M-sample signal (spread over the workers by level).
    s.type_into("#sig-rate", "1M").await;
    s.wait_stored("r.signal.sample_rate_hz === 1e6 && r.signal.duration_s === 1").await;
    s.wait_for("#signal-sweep").await.click().await.unwrap();
    let sweep_ms = browser::wait_until("the noise sweep to finish", std::time::Duration::from_secs(120), || async {
        let v = s.js("const e = document.querySelector('#sweep'); const t = document.querySelector('#signal-time'); return e && t && t.textContent.startsWith('1000000 samples') && !document.querySelector('#signal-progress') ? +t.dataset.ms : null;").await;
        v.as_f64().ok_or(v.to_string())
    })
    .await;

    // A 1,000,000-row CSV capture (about 40 MB) imported, watched by the long-task observer.
    let dir = std::env::temp_dir().join(format!("hysteron-timing-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp folder");
    let csv = dir.join("capture-1m.csv");
    let text = hysteron_tests::captures::sine_capture_csv("time_s;volts", 1_000_000, 1e-6);
    std::fs::write(&csv, text).expect("write the capture");
    s.js("window.__long = []; window.__t0 = performance.now(); return 0;").await;
    s.wait_for("#csv-file").await.send_keys(csv.to_str().unwrap_or_default()).await.expect("choose the capture");
    let import_ms = browser::wait_until("the 1 M-row import to finish", std::time::Duration::from_secs(120), || async {
        let v = s.js("const e = document.querySelector('#csv-status'); return e && e.textContent.includes('1000000 samples') ? performance.now() - window.__t0 : null;").await;
        v.as_f64().ok_or(v.to_string())
    })
    .await;
    s.js("return new Promise(r => requestAnimationFrame(() => setTimeout(() => r(0), 200)));").await;
    let import_long: Vec<f64> = serde_json::from_value(s.js("return window.__long;").await).unwrap_or_default();
    let _ = std::fs::remove_dir_all(&dir);

    // Opening each demo: the length of the task that the click runs (to the next task), and the
    // long tasks until the design has settled.
    let mut opens = Vec::new();
    s.js("window.__long = []; return 0;").await;
    for demo in hysteron_core::catalog::demos() {
        s.wait_for("#starter-choice").await.select_by_value(&format!("demo:{}", demo.key)).await.expect("choose a demo");
        let ms = s
            .client
            .execute_async(
                r#"const done = arguments[arguments.length - 1];
                   const c = new MessageChannel(); let t0 = 0;
                   c.port1.onmessage = () => done(performance.now() - t0);
                   c.port2.postMessage(0);
                   t0 = performance.now();
                   document.querySelector('#add-starter').click();"#,
                vec![],
            )
            .await
            .expect("open a demo");
        opens.push(ms.as_f64().unwrap_or(f64::NAN));
        s.wait_js("the demo's results", "const o = document.querySelector('#vt-upper'); return o && o.dataset.value !== '' ? 1 : null;").await;
        s.js("return new Promise(r => setTimeout(() => r(0), 400));").await;
    }
    let open_long: Vec<f64> = serde_json::from_value(s.js("return window.__long;").await).unwrap_or_default();
    opens.sort_by(|a, b| a.total_cmp(b));
    println!(
        "browser timing: 1M-row CSV import {import_ms:.0} ms, main-thread tasks over 50 ms: {import_long:?}; \
         opening each of {} demos: click task median {:.1} ms, longest {:.1} ms; tasks over 50 ms meanwhile: {open_long:?}",
        opens.len(),
        percentile(&opens, 0.5),
        opens.last().copied().unwrap_or(f64::NAN)
    );

    // Page usable again after a reload (the files now come from the cache or the service worker).
    s.reload().await;
    let again = s.js("const m = performance.getEntriesByName('hysteron-mounted')[0]; return m ? m.startTime : -1;").await;
    let again_ms = again.as_f64().unwrap_or(-1.0);
    let again_editable_ms = editable_at(&s).await;
    let workers = s.js("return navigator.hardwareConcurrency;").await;

    println!(
        "browser timing ({workers} hardware threads): first shown (the notebook as last saved) {mounted_ms:.0} ms and editable {editable_ms:.0} ms after navigation, \
         {again_ms:.0} / {again_editable_ms:.0} ms after a reload; \
         input→results p50 {p50:.2} ms, p95 {p95:.2} ms (60 edits); \
         Monte Carlo 100k {mc_ms:.0} ms wall, median of 5 ({:.2}× the test build's native run, {native_mc_ms:.1} ms); E96 search {search_ms:.1} ms (median of 3); 1M-sample signal {signal_ms:.0} ms; \
         noise sweep of the 1M-sample signal {sweep_ms:.0} ms; \
         10M-sample signal test {ten_m_ms:.0} ms (click to result shown {wall_ms:.0} ms), main-thread tasks over 50 ms: {} (longest {longest:.0} ms) {long:?}",
        mc_ms / native_mc_ms,
        long.len()
    );
    let (cold_mounted, cold_paint, cold_editable, cold_sections) = cold_loads(&s, 3).await;
    println!(
        "browser timing: first visit with the cache and storage emptied (browser already running), median of 3: \
         first module mounted {cold_mounted:.0} ms, first contentful paint {cold_paint:.0} ms, editable {cold_editable:.0} ms, \
         schematic {cold_sections:.0} ms after navigation"
    );
    let (mut piece_raw, mut piece_packed, mut pieces) = (0, 0, 0);
    let editor_files = editor_files();
    let (mut editor_raw, mut editor_packed) = (0, 0);
    for (name, raw, packed) in module_sizes() {
        if name.starts_with("hysteron-split_") || name.starts_with("hysteron-chunk_") {
            (piece_raw, piece_packed, pieces) = (piece_raw + raw, piece_packed + packed, pieces + 1);
            if editor_files.iter().any(|f| name.starts_with(f.as_str())) {
                (editor_raw, editor_packed) = (editor_raw + raw, editor_packed + packed);
            }
        } else {
            println!("browser timing: module {name}: {raw} bytes, {packed} bytes compressed (gzip -9 equivalent)");
        }
    }
    println!(
        "browser timing: {pieces} pieces fetched after the first module: {piece_raw} bytes, {piece_packed} bytes compressed in all; \
         the editor's ({}): {editor_raw} bytes, {editor_packed} bytes compressed",
        editor_files.join(", ")
    );
    s.close().await;
}
