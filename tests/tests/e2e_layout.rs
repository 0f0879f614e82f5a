//! Browser end-to-end: the page's layout. At phone width (390 × 844) nothing is wider than the
//! screen for any demo, with every study open; on a wide screen (1400 × 1000) the key results and
//! the transfer curve stay in view while a field far down the inputs has the focus; every plot is
//! drawn at its on-screen size times the device-pixel ratio and again when that size changes.
//! The run saves screenshots of every demo at 1400 px and 390 px wide in `target/screenshots/`
//! (`<demo>-1400.png`, `<demo>-390.png`, and `lathe-tachometer-studies-*.png` with the studies open
//! and run).

use base64::Engine;
use hysteron_tests::browser::{self, Session};
use std::path::PathBuf;

async fn cdp(s: &Session, cmd: &str, params: serde_json::Value) -> serde_json::Value {
    s.devtools(cmd, params).await
}

/// Makes the page's viewport `width` × `height` CSS pixels at `dpr` device pixels per CSS pixel, and
/// waits until the page sees that size.
async fn viewport(s: &Session, width: u32, height: u32, dpr: f64) {
    // Phones draw scrollbars over the page: the layout width is the whole screen width.
    cdp(s, "Emulation.setScrollbarsHidden", serde_json::json!({"hidden": true})).await;
    cdp(
        s,
        "Emulation.setDeviceMetricsOverride",
        serde_json::json!({"width": width, "height": height, "deviceScaleFactor": dpr, "mobile": false}),
    )
    .await;
    s.wait_js(
        &format!("the viewport to be {width} × {height} at ratio {dpr}"),
        &format!("return innerWidth === {width} && innerHeight === {height} && devicePixelRatio === {dpr};"),
    )
    .await;
}

fn screenshot_dir() -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..").join("target").join("screenshots");
    std::fs::create_dir_all(&dir).expect("create target/screenshots");
    dir
}

/// Saves the whole page (beyond the viewport) as a PNG.
async fn screenshot(s: &Session, name: &str) {
    let shot = cdp(s, "Page.captureScreenshot", serde_json::json!({"format": "png", "captureBeyondViewport": true})).await;
    let data = shot["data"].as_str().unwrap_or_default();
    let png = base64::engine::general_purpose::STANDARD.decode(data).expect("screenshot is base64");
    assert!(png.len() > 1000, "screenshot {name} is empty");
    std::fs::write(screenshot_dir().join(format!("{name}.png")), png).expect("write screenshot");
}

/// The elements that reach beyond the viewport's left or right edge, except those inside a box
/// that scrolls or clips sideways (a wide table scrolling in its own box is fine), as
/// "tag#id.class width×left" texts; and the page's scroll width.
const OVERFLOW_JS: &str = r#"
    const w = document.documentElement.clientWidth;
    const clipped = el => {
        for (let p = el.parentElement; p && p !== document.body; p = p.parentElement) {
            const o = getComputedStyle(p).overflowX;
            if (o !== 'visible') return true;
        }
        return false;
    };
    const bad = [];
    for (const el of document.querySelectorAll('body *')) {
        const r = el.getBoundingClientRect();
        if (r.width === 0 || r.height === 0) continue;
        if ((r.right > w + 0.5 || r.left < -0.5) && !clipped(el)) {
            bad.push(el.tagName.toLowerCase() + (el.id ? '#' + el.id : '') + (el.className && typeof el.className === 'string' ? '.' + el.className.trim().split(/\s+/).join('.') : '') + ' ' + Math.round(r.width) + '×' + Math.round(r.left));
        }
    }
    return { scroll: document.documentElement.scrollWidth, width: w, bad: bad.slice(0, 12) };
"#;

/// Opens every folded study and waits until the worst-case table and the part list are shown.
async fn open_studies(s: &Session) {
    s.js("document.querySelectorAll('details.study').forEach(d => d.open = true); return true;").await;
    s.wait_js(
        "the worst-case table and the part list to be shown",
        "const a = document.querySelector('#worst-case, #tolerance-error'); const b = document.querySelector('#bom, #bom-error'); \
         return !!a && !!b && a.getBoundingClientRect().height > 0;",
    )
    .await;
}

async fn close_studies(s: &Session) {
    s.js("document.querySelectorAll('details.study').forEach(d => d.open = false); window.scrollTo(0, 0); return true;").await;
}

/// Waits until the plots on screen have been drawn at their present size (the backing store is the
/// CSS size × device-pixel ratio, to the pixel). A plot in a closed fold is not on screen (Chromium
/// still gives it a client size) and is drawn only when its fold opens.
async fn plots_fit(s: &Session, what: &str) {
    let script = "const shown = [...document.querySelectorAll('canvas')].filter(c => c.clientWidth > 0 && c.clientHeight > 0 && !c.closest('details:not([open])')); \
         const bad = shown.filter(c => c.width !== Math.round(c.clientWidth * devicePixelRatio) || c.height !== Math.round(c.clientHeight * devicePixelRatio)) \
             .map(c => (c.id || c.className) + ' ' + c.width + '×' + c.height + ' for ' + c.clientWidth + '×' + c.clientHeight + ' at ' + devicePixelRatio); \
         return { shown: shown.length, bad };";
    browser::wait_until(&format!("the plots to be drawn at CSS size × devicePixelRatio ({what})"), browser::WAIT, || async {
        let v = s.js(script).await;
        if v["shown"].as_u64().unwrap_or(0) > 0 && v["bad"].as_array().is_some_and(|b| b.is_empty()) { Ok(()) } else { Err(v.to_string()) }
    })
    .await;
}

#[tokio::test(flavor = "multi_thread")]
async fn no_element_wider_than_a_phone_screen_and_screenshots_of_every_demo() {
    let s = browser::start().await;
    for demo in hysteron_core::catalog::demos() {
        viewport(&s, 1400, 1000, 1.0).await;
        s.add_starter(&format!("demo:{}", demo.key)).await;
        close_studies(&s).await;
        plots_fit(&s, demo.key).await;
        screenshot(&s, &format!("{}-1400", demo.key)).await;

        viewport(&s, 390, 844, 2.0).await;
        plots_fit(&s, demo.key).await;
        screenshot(&s, &format!("{}-390", demo.key)).await;
        // Every study open: the widest content the page has (worst-case and part-list tables).
        open_studies(&s).await;
        let seen = s.js(OVERFLOW_JS).await;
        let bad = seen["bad"].as_array().cloned().unwrap_or_default();
        assert!(
            bad.is_empty() && seen["scroll"].as_f64() <= seen["width"].as_f64(),
            "{}: at 390 px wide the page is {} px wide; too wide: {bad:?}",
            demo.key,
            seen["scroll"]
        );
        // Numbers keep their units on one line: no value cell of the tables breaks inside.
        let broken = s
            .js("const lines = el => { const r = document.createRange(); r.selectNodeContents(el); \
                   const fs = parseFloat(getComputedStyle(el).fontSize); const tops = [...r.getClientRects()].filter(b => b.width > 0).map(b => b.top).sort((a, b) => a - b); \
                   return 1 + tops.filter((t, i) => i > 0 && t - tops[i - 1] > 0.6 * fs).length; }; \
                 return [...document.querySelectorAll('table.grid td, .key-value')].filter(td => !td.classList.contains('notes') && !td.hasAttribute('colspan') \
                 && /\\d/.test(td.textContent) && td.getClientRects().length > 0 && lines(td) > 1).map(td => td.textContent).slice(0, 5);")
            .await;
        assert_eq!(broken, serde_json::json!([]), "{}: values wrapped across lines", demo.key);
        close_studies(&s).await;
    }
    s.close().await;
}

/// Whether the element's box lies wholly inside the viewport.
fn in_view_js(css: &str) -> String {
    format!(
        "const el = document.querySelector('{css}'); if (!el) return 'missing'; const r = el.getBoundingClientRect(); \
         return (r.height > 0 && r.top >= -0.5 && r.left >= -0.5 && r.bottom <= innerHeight + 0.5 && r.right <= innerWidth + 0.5) \
         || ('{css} at ' + [r.left, r.top, r.right, r.bottom].map(Math.round).join(',') + ' in ' + innerWidth + '×' + innerHeight);"
    )
}

async fn assert_in_view(s: &Session, css: &str, context: &str) {
    let v = s.js(&in_view_js(css)).await;
    assert_eq!(v, serde_json::Value::Bool(true), "{css} not wholly in view {context}: {v}");
}

#[tokio::test(flavor = "multi_thread")]
async fn results_and_curve_stay_in_view_while_editing() {
    let s = browser::start().await;
    viewport(&s, 1400, 1000, 1.0).await;
    s.add_starter("demo:lathe-tachometer").await;
    // Fields from the top of the inputs to the bottom: the part list's package choice, a tolerance
    // field (inside its fold) and the last circuit field. Each is focused the way a user reaches it
    // (the page scrolls to it); the key results and the curve must stay wholly in view.
    for css in ["#field-supply_v", "#tol-resistor", "#bom-package", "#mc-trials"] {
        let el = s.wait_for(css).await;
        s.js(&format!("document.querySelector('{css}').scrollIntoView({{block: 'center'}}); return true;")).await;
        el.click().await.unwrap_or_else(|e| panic!("click {css}: {e}"));
        s.wait_js(&format!("{css} to have the focus"), &format!("return document.activeElement === document.querySelector('{css}');")).await;
        let scrolled = s.js("return window.scrollY;").await;
        let context = format!("with {css} focused at 1400 × 1000 (page scrolled to {scrolled})");
        assert_in_view(&s, "#key-figures", &context).await;
        assert_in_view(&s, "#transfer-plot", &context).await;
        assert_in_view(&s, css, &context).await;
    }
    // The figures follow the typing beside the field being edited.
    let before = s.number("#vt-upper").await;
    s.type_into("#field-supply_v", "9").await;
    s.wait_number_change("#vt-upper", before).await;
    assert_in_view(&s, "#key-figures", "after typing a supply").await;

    // At phone width the one-line strip of VT+, VT− and the hysteresis stays at the top while a
    // field far down is focused.
    viewport(&s, 390, 844, 2.0).await;
    let el = s.wait_for("#mc-trials").await;
    s.js("document.querySelector('#mc-trials').scrollIntoView({block: 'center'}); return true;").await;
    el.click().await.expect("click the trials field");
    let context = "with #mc-trials focused at 390 × 844";
    assert_in_view(&s, "#key-strip", context).await;
    let strip = s.text("#key-strip").await;
    assert!(strip.contains("VT+") && strip.contains("VT−") && strip.contains("hysteresis"), "{strip}");
    assert_in_view(&s, "#mc-trials", context).await;
    let covered = s
        .js("const f = document.querySelector('#mc-trials').getBoundingClientRect(); const k = document.querySelector('#key-strip').getBoundingClientRect(); return f.top < k.bottom;")
        .await;
    assert_eq!(covered, serde_json::Value::Bool(false), "the key strip covers the focused field");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn plots_are_drawn_at_screen_size_times_pixel_ratio() {
    let s = browser::start().await;
    viewport(&s, 1400, 1000, 2.0).await;
    s.add_starter("demo:lathe-tachometer").await;
    let size = "const c = document.querySelector('#transfer-plot'); return [c.width, c.height, c.clientWidth, c.clientHeight];";
    plots_fit(&s, "transfer curve at 1400 px, ratio 2").await;
    let wide = s.js(size).await;
    assert!(wide[2].as_f64().unwrap_or(0.0) >= 300.0, "the transfer curve is only {wide} wide");
    // A narrower window: the curve is redrawn at its new size, not stretched.
    viewport(&s, 700, 900, 1.5).await;
    plots_fit(&s, "transfer curve at 700 px, ratio 1.5").await;
    let narrow = s.js(size).await;
    assert_ne!(wide[2], narrow[2], "the curve kept its width when the window narrowed");

    // Histograms appear (in the opened tolerance fold) at their own size.
    viewport(&s, 1400, 1000, 2.0).await;
    s.wait_for("#mc-run").await.click().await.expect("run Monte Carlo");
    s.wait_js("the histograms to be shown", "const c = document.querySelector('#hist-vt-upper'); return c && c.clientWidth > 0;").await;
    plots_fit(&s, "histograms").await;
    // The time view of the signal test, with its lanes.
    s.wait_for("#signal-run").await.click().await.expect("run the signal test");
    s.wait_js("the time view to be shown", "const c = document.querySelector('#time-plot'); return c && c.clientWidth > 0;").await;
    // A run's waveforms are hidden only between its report and their drawing (the next task), and
    // shown again once drawn: run it again and both runs end with the waveforms in view.
    const WAVES_SHOWN: &str = "const v = document.querySelector('.time-view'); return !!v && !v.classList.contains('waves-pending') && getComputedStyle(v).visibility === 'visible';";
    s.wait_js("the waveforms to be in view", WAVES_SHOWN).await;
    let first_ms = s.js("return document.querySelector('#signal-time').dataset.ms;").await;
    s.wait_for("#signal-run").await.click().await.expect("run the signal test again");
    // The second run's report: its run time (a float of performance.now() differences) differs.
    s.wait_js("the second run's report", &format!("const t = document.querySelector('#signal-time'); return !!t && t.dataset.ms !== {first_ms};")).await;
    s.wait_js("the waveforms to be in view after a second run", WAVES_SHOWN).await;
    plots_fit(&s, "time view").await;
    // Zooming redraws at the same backing size (no stretched bitmap).
    s.wait_for("#zoom-in").await.click().await.expect("zoom in");
    plots_fit(&s, "time view after zoom").await;
    // The studies with their plots, for the eye: at 1400 px and at 390 px.
    plots_fit(&s, "studies at 1400 px").await;
    screenshot(&s, "lathe-tachometer-studies-1400").await;
    viewport(&s, 390, 844, 2.0).await;
    plots_fit(&s, "studies at 390 px").await;
    screenshot(&s, "lathe-tachometer-studies-390").await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn plots_follow_a_change_of_the_pixel_ratio_alone() {
    // Only the device scale factor changes (the window keeps its CSS size, so no resize happens):
    // every plot shown must redraw its backing store at CSS size × the new ratio.
    let s = browser::start().await;
    viewport(&s, 1400, 1000, 1.0).await;
    s.add_starter("demo:lathe-tachometer").await;
    // A second plot kind with its own redraw: the Monte Carlo histograms.
    s.wait_for("#mc-run").await.click().await.expect("run Monte Carlo");
    s.wait_js("the histograms to be shown", "const c = document.querySelector('#hist-vt-upper'); return c && c.clientWidth > 0;").await;
    plots_fit(&s, "ratio 1").await;
    let size = "return ['#transfer-plot', '#hist-vt-upper'].map(q => { const c = document.querySelector(q); return [c.width, c.height, c.clientWidth, c.clientHeight]; });";
    let at_one = s.js(size).await;
    for dpr in [2.0, 1.5, 3.0, 1.0] {
        viewport(&s, 1400, 1000, dpr).await;
        plots_fit(&s, &format!("ratio {dpr} at the same window size")).await;
        let now = s.js(size).await;
        for k in 0..2 {
            assert_eq!(now[k][2], at_one[k][2], "plot {k}: the CSS width changed with the ratio alone");
            let css_w = now[k][2].as_f64().unwrap_or(0.0);
            assert_eq!(now[k][0].as_f64(), Some((css_w * dpr).round()), "plot {k} at ratio {dpr}: {}", now[k]);
        }
    }
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn part_list_shows_every_column_at_1400_px_and_fits_at_390_px() {
    let s = browser::start().await;
    for demo in ["rain-gauge", "beehive-clock", "lathe-tachometer"] {
        viewport(&s, 1400, 1000, 1.0).await;
        s.add_starter(&format!("demo:{demo}")).await;
        open_studies(&s).await;
        s.js("document.querySelector('#bom').scrollIntoView(); return 1;").await;
        // No column scrolls out of view: the table needs no sideways scrolling in its box, and
        // every heading lies inside the card.
        let seen = s
            .js("const t = document.querySelector('#bom'); const card = t.closest('.card').getBoundingClientRect(); \
                 const out = [...t.querySelectorAll('th')].filter(th => { const r = th.getBoundingClientRect(); return r.right > card.right + 0.5 || r.width === 0; }).map(th => th.textContent); \
                 return { scroll: t.scrollWidth, client: t.clientWidth, out };")
            .await;
        assert!(
            seen["scroll"].as_f64() <= seen["client"].as_f64().map(|c| c + 1.0) && seen["out"].as_array().is_some_and(|o| o.is_empty()),
            "{demo}: at 1400 px the part list scrolls or hides columns: {seen}"
        );
        // The oscillator's and debouncer's lines are no taller than a resistor's line.
        let heights = s
            .js("const h = q => [...document.querySelectorAll(q)].map(r => r.getBoundingClientRect().height); \
                 return { r: h('#bom tr.bom-line'), a: h('#bom tr.bom-app-line') };")
            .await;
        let max = |k: &str| heights[k].as_array().map(|a| a.iter().filter_map(|x| x.as_f64()).fold(0.0, f64::max)).unwrap_or(0.0);
        let min_r = heights["r"].as_array().map(|a| a.iter().filter_map(|x| x.as_f64()).fold(f64::INFINITY, f64::min)).unwrap_or(0.0);
        assert!(max("a") <= 1.2 * min_r, "{demo}: application lines are tall ({heights})");
        screenshot(&s, &format!("{demo}-partlist-1400")).await;

        // At phone width the page is no wider than the screen.
        viewport(&s, 390, 844, 2.0).await;
        let seen = s.js(OVERFLOW_JS).await;
        assert!(
            seen["bad"].as_array().is_some_and(|b| b.is_empty()) && seen["scroll"].as_f64() <= seen["width"].as_f64(),
            "{demo}: at 390 px: {seen}"
        );
        s.js("document.querySelector('#bom').scrollIntoView(); return 1;").await;
        // The figures may scroll sideways in the table's box, but every part's notes wrap inside the
        // part of the box that shows, so they read without scrolling.
        let notes = s
            .js("const t = document.querySelector('#bom').getBoundingClientRect(); \
                 const n = [...document.querySelectorAll('#bom .note-text')]; \
                 return { count: n.length, out: n.filter(e => { const r = e.getBoundingClientRect(); return r.right > t.right + 1 || r.left < t.left - 1; }).map(e => e.textContent.slice(0, 40)) };")
            .await;
        assert!(
            notes["count"].as_u64().unwrap_or(0) >= 1 && notes["out"].as_array().is_some_and(|o| o.is_empty()),
            "{demo}: at 390 px a part's notes run out of view: {notes}"
        );
        screenshot(&s, &format!("{demo}-partlist-390")).await;
        close_studies(&s).await;
    }
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn worst_case_table_shows_every_column_at_1400_px() {
    let s = browser::start().await;
    viewport(&s, 1400, 1000, 1.0).await;
    for demo in ["lathe-tachometer", "sawmill-end-stop"] {
        s.add_starter(&format!("demo:{demo}")).await;
        open_studies(&s).await;
        s.wait_for("#worst-case").await;
        // No sideways scrolling in its box, and its last heading inside the card.
        let seen = s
            .js("const t = document.querySelector('#worst-case'); const card = t.closest('.card').getBoundingClientRect(); \
                 const ths = [...t.querySelectorAll('th')]; const last = ths[ths.length - 1].getBoundingClientRect(); \
                 return { scroll: t.scrollWidth, client: t.clientWidth, last_right: last.right, card_right: card.right };")
            .await;
        assert!(
            seen["scroll"].as_f64() <= seen["client"].as_f64().map(|c| c + 1.0)
                && seen["last_right"].as_f64() <= seen["card_right"].as_f64().map(|c| c + 0.5),
            "{demo}: at 1400 px the worst-case table scrolls: {seen}"
        );
        close_studies(&s).await;
    }
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn a_plot_in_a_closed_fold_is_drawn_when_the_fold_opens() {
    // A study's plot built while its fold is closed is left undrawn (Chromium still gives it a
    // client size, so drawing it cost a forced layout for a plot nobody sees); clicking the fold's title draws it at its CSS size ×
    // device-pixel ratio, with ink on it.
    let s = browser::start().await;
    viewport(&s, 1400, 1000, 2.0).await;
    s.add_starter("demo:lathe-tachometer").await;
    s.wait_js("the temperature study to be built in its closed fold", "return !!document.querySelector('#temperature-plot');").await;
    let folded = s.js("const c = document.querySelector('#temperature-plot'); return [c.closest('details').open, c.width];").await;
    assert_eq!(folded, serde_json::json!([false, 0]), "the folded plot was drawn (or its fold was open): {folded}");
    s.client
        .find(fantoccini::Locator::Css("#fold-temperature > summary"))
        .await
        .expect("the temperature study's title")
        .click()
        .await
        .expect("open the fold");
    plots_fit(&s, "the temperature plot once its fold opened").await;
    let ink = "const c = document.querySelector('#temperature-plot'); if (c.width === 0) return 0; \
               const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data; let n = 0; \
               for (let i = 0; i < d.length; i += 4) if (d[i + 3] > 0 && (d[i] < 200 || d[i + 2] < 200)) n++; return n;";
    let inked = s.js(ink).await.as_u64().unwrap_or(0);
    let size = s.js("const c = document.querySelector('#temperature-plot'); return [c.width, c.clientWidth];").await;
    assert!(inked > 500, "the temperature plot has {inked} inked pixels once shown ({size})");
    assert_eq!(size[0].as_f64(), size[1].as_f64().map(|w| (w * 2.0).round()), "backing store {size}");
    s.close().await;
}
