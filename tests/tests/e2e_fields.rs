//! Browser end-to-end: the page's number fields, typed into with real key events at human speed
//! (`Session::type_into`, one key every 60 ms; never values set from a script). Covers every field
//! kind — resistor in the RKM code, voltage, current, frequency, RMS, duration, percent and the
//! signal builder's fields — and the field regressions of issue 12:
//! 1. a field keeps its focus and its text while typed into (the signal builder lost both);
//! 2. a current budget never puts NaN into the anchor field or the stored design;
//! 3. a value outside its physical range (`core::limits`) is refused at the field;
//! 4. each field says what is wrong beside itself, in the words on screen, never in code names.

use fantoccini::key::Key;
use hysteron_tests::browser::{self, Session};

/// The id of the element that has the keyboard focus.
async fn focused(s: &Session) -> String {
    s.js("return document.activeElement ? document.activeElement.id : ''").await.as_str().unwrap_or_default().to_string()
}

/// The text a field shows.
async fn shown(s: &Session, css: &str) -> String {
    s.wait_for(css).await.prop("value").await.ok().flatten().unwrap_or_default()
}

/// Types `text` into the field `id` and checks that the field still has the focus and still holds
/// exactly what was typed once the page has taken the value (`stored`, a predicate over the stored
/// record `r`).
async fn type_and_keep(s: &Session, id: &str, text: &str, stored: &str) {
    let css = format!("#{id}");
    s.type_into(&css, text).await;
    s.wait_stored(stored).await;
    // The page has reacted to the last key (the stored record changed); give its effects the same
    // chance to run as a person's next key would, by waiting for a condition that needs a render:
    // the field's message is empty for a valid value.
    s.wait_js(&format!("{id} to show no message"), &format!("const e = document.getElementById('{id}-error'); return !!e && e.textContent === '';")).await;
    assert_eq!(focused(s).await, id, "{id} lost the focus while {text:?} was typed");
    assert_eq!(shown(s, &css).await, text, "{id} rewrote what was typed");
}

/// Waits until the field `id`, committed after `typed` was entered, shows that value in the page's
/// notation (`core::notation::format_engineering`, 4 significant digits).
async fn committed(s: &Session, id: &str, typed: &str) {
    let v = hysteron_core::notation::parse_value(typed).expect("a number");
    let want = hysteron_core::notation::format_engineering(v, 4);
    assert_ne!(want, typed, "the test needs a text that commit rewrites");
    s.wait_js(&format!("{id} to show {want:?} after the commit"), &format!("return document.getElementById('{id}').value === {};", serde_json::json!(want))).await;
}

/// Leaves a field with Tab, as a person moves on to the next one.
async fn tab_out(s: &Session, css: &str) {
    s.wait_for(css).await.send_keys(&Key::Tab.to_string()).await.expect("press Tab");
}

/// The message shown beside the field `id`, once there is one.
async fn message(s: &Session, id: &str) -> String {
    s.wait_text(&format!("#{id}-error"), "a message", |t| !t.trim().is_empty()).await
}

/// A message reads in the words on screen: no record names such as `ra_ohm` or `supply_v`.
fn assert_plain_words(msg: &str) {
    let code_name = msg
        .split(|c: char| !(c.is_ascii_alphanumeric() || c == '_' || c == '.'))
        .find(|w| w.contains('_') && w.chars().any(|c| c.is_ascii_alphabetic()));
    assert!(code_name.is_none(), "message shows a code name {code_name:?}: {msg:?}");
}

#[tokio::test(flavor = "multi_thread")]
async fn signal_builder_fields_keep_focus_and_text() {
    let s = browser::start().await;
    s.wait_for("#signal-add").await.click().await.expect("describe a signal");
    // The default signal: a DC level, a sine and white noise (core::signal::generate's default).
    s.wait_for("#sig-comp-1-frequency_hz").await;
    // Issue 12 item 1: "25" into a sine's frequency kept "2".
    type_and_keep(&s, "sig-comp-1-frequency_hz", "25", "r.signal.components[1].frequency_hz === 25").await;
    type_and_keep(&s, "sig-comp-1-amplitude_v", "1.5", "r.signal.components[1].amplitude_v === 1.5").await;
    type_and_keep(&s, "sig-comp-0-level_v", "2.75", "r.signal.components[0].level_v === 2.75").await;
    // "100m" into a noise RMS gave "1" (1 V).
    type_and_keep(&s, "sig-noise-0-rms_v", "100m", "Math.abs(r.signal.noise[0].rms_v - 0.1) < 1e-15").await;
    // Duration was reformatted mid-typing ("0.55" became "500 m5").
    type_and_keep(&s, "sig-duration", "0.55", "r.signal.duration_s === 0.55").await;
    // Committing (Tab) normalises the text to the page's notation, and only then.
    tab_out(&s, "#sig-duration").await;
    committed(&s, "sig-duration", "0.55").await;
    // A component added later is edited the same way; its fields are in plain words with units.
    s.wait_for("#sig-add-sine").await.click().await.expect("add a sine");
    s.wait_for("#sig-comp-2-frequency_hz").await;
    type_and_keep(&s, "sig-comp-2-frequency_hz", "120", "r.signal.components[2].frequency_hz === 120").await;
    let titles = s.js("return [...document.querySelectorAll('.signal-item strong')].map(e => e.textContent)").await;
    assert_eq!(titles, serde_json::json!(["DC level", "Sine", "Sine", "White noise"]), "part titles");
    let units = s.js("return document.querySelector('#sig-comp-2-frequency_hz').parentElement.querySelector('.unit').textContent").await;
    assert_eq!(units, serde_json::json!("Hz"));
    // A frequency at or above half the sample rate is refused at its field, with core's reason.
    s.type_into("#sig-comp-2-frequency_hz", "1G").await;
    let msg = message(&s, "sig-comp-2-frequency_hz").await;
    assert!(msg.contains("half the sample rate"), "{msg}");
    assert_plain_words(&msg);
    // The keys before the last ("1") formed a valid frequency and were taken; 1 GHz never is.
    s.wait_stored("r.signal.components[2].frequency_hz < 1e6").await;
    // The mains hum has its 50/60 Hz choice.
    s.wait_for("#sig-add-hum").await.click().await.expect("add mains hum");
    s.wait_for("#sig-noise-1-mains").await.select_by_value("hz60").await.expect("choose 60 Hz");
    s.wait_stored("r.signal.noise[1].kind === 'hum' && r.signal.noise[1].mains === 'hz60'").await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn every_field_kind_takes_typed_values() {
    let s = browser::start().await;
    s.wait_for("#field-ra_ohm").await;
    // Resistor in the RKM code (IEC 60062): "4k7" is 4.7 kΩ.
    type_and_keep(&s, "field-ra_ohm", "4k7", "Math.abs(r.circuit.ra_ohm - 4700) < 1e-9").await;
    tab_out(&s, "#field-ra_ohm").await;
    committed(&s, "field-ra_ohm", "4k7").await;
    // Voltage.
    type_and_keep(&s, "field-supply_v", "12", "r.circuit.device.supply_v === 12").await;
    // Threshold targets (voltage) and the current budget, "100u" = 100 µA.
    type_and_keep(&s, "target-vt-upper", "7.5", "r.targets && r.targets.vt_upper_v === 7.5").await;
    type_and_keep(&s, "target-budget", "100u", "Math.abs(r.targets.impedance.current_budget_a - 1e-4) < 1e-18").await;
    // Enter commits too.
    s.wait_for("#target-budget").await.send_keys(&Key::Enter.to_string()).await.expect("press Enter");
    committed(&s, "target-budget", "100u").await;
    // Percent.
    type_and_keep(&s, "tol-resistor", "0.5", "r.tolerance && r.tolerance.resistor_tolerance_pct === 0.5").await;
    // Whole numbers: trials in engineering notation.
    type_and_keep(&s, "mc-trials", "20k", "r.tolerance.monte_carlo.trials === 20000").await;
    s.type_into("#mc-trials", "2.5").await;
    let msg = message(&s, "mc-trials").await;
    assert!(msg.contains("whole number"), "{msg}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn a_current_budget_never_stores_nan() {
    let s = browser::start().await;
    s.wait_for("#target-budget").await;
    // Issue 12 item 2: "100u" in the current budget, then Tab, put "NaN" into the anchor field.
    s.type_into("#target-budget", "100u").await;
    tab_out(&s, "#target-budget").await;
    s.wait_stored("r.targets && Math.abs(r.targets.impedance.current_budget_a - 1e-4) < 1e-18 && !('anchor_ohm' in r.targets.impedance)").await;
    committed(&s, "target-budget", "100u").await;
    let anchor = shown(&s, "#target-anchor").await;
    assert_eq!(anchor, "", "the anchor field shows {anchor:?} while a current budget is chosen");
    let texts = s.js("return [...document.querySelectorAll('input')].map(i => i.value).filter(v => /nan|inf/i.test(v))").await;
    assert_eq!(texts, serde_json::json!([]), "fields showing NaN");
    let raw = s
        .js("const li = document.querySelector('#design-list li.open'); return localStorage.getItem('hysteron/design/' + li.dataset.id);")
        .await;
    let raw = raw.as_str().unwrap_or_default();
    assert!(!raw.contains("NaN"), "stored design holds NaN: {raw}");
    let targets: serde_json::Value = serde_json::from_str::<serde_json::Value>(raw).expect("stored JSON")["record"]["targets"].clone();
    assert!(!targets.to_string().contains("null"), "stored targets hold a non-number: {targets}");
    // Typing an anchor again chooses the anchor and empties the budget.
    s.type_into("#target-anchor", "47k").await;
    s.wait_stored("r.targets.impedance.anchor_ohm === 47000").await;
    s.wait_js("the budget field to empty", "return document.getElementById('target-budget').value === '';").await;
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn out_of_range_values_are_refused_at_the_field_in_plain_words() {
    let s = browser::start().await;
    s.wait_for("#field-supply_v").await;
    type_and_keep(&s, "field-supply_v", "5", "r.circuit.device.supply_v === 5").await;
    // Issue 12 item 3: a supply of 1e300 was accepted and the page grew 6,617 px wide.
    s.type_into("#field-supply_v", "1e300").await;
    let msg = message(&s, "field-supply_v").await;
    assert!(msg.starts_with("must be between"), "{msg}");
    assert_plain_words(&msg);
    // The keys before ("1", "1e3") were valid supplies and were taken; 1e300 never is.
    s.wait_stored("r.circuit.device.supply_v <= 1e5").await;
    let wide = s.js("return document.documentElement.scrollWidth <= window.innerWidth").await;
    assert_eq!(wide, serde_json::json!(true), "the page grew wider than the window");
    // Item 4: a 0 V supply is refused beside the supply field, naming the supply, not `supply_v`.
    s.type_into("#field-supply_v", "0").await;
    let msg = message(&s, "field-supply_v").await;
    assert!(msg.contains("supply") && msg.contains("negative rail"), "{msg}");
    assert_plain_words(&msg);
    s.wait_stored("r.circuit.device.supply_v > 0").await;
    // A negative resistor is refused beside it.
    s.type_into("#field-rf_ohm", "-10k").await;
    let msg = message(&s, "field-rf_ohm").await;
    assert!(msg.contains("must be between"), "{msg}");
    assert_plain_words(&msg);
    // A current budget of 1e3 A and a percentage over 100 are refused.
    s.type_into("#target-budget", "1k").await;
    assert_plain_words(&message(&s, "target-budget").await);
    s.type_into("#tol-resistor", "150").await;
    let msg = message(&s, "tol-resistor").await;
    assert!(msg.contains("100 %"), "{msg}");
    // Min above max in the spec window is refused beside the field, in the labels on screen.
    type_and_keep(&s, "spec-vt-upper-max", "3", "r.tolerance && r.tolerance.spec.vt_upper_max_v === 3").await;
    s.type_into("#spec-vt-upper-min", "4").await;
    let msg = message(&s, "spec-vt-upper-min").await;
    assert!(msg.contains("VT+ at most"), "{msg}");
    assert_plain_words(&msg);
    // VT+ wanted below VT− wanted is refused beside it.
    type_and_keep(&s, "target-vt-lower", "2", "r.targets && r.targets.vt_lower_v === 2").await;
    s.type_into("#target-vt-upper", "1").await;
    let msg = message(&s, "target-vt-upper").await;
    assert!(msg.contains("VT−"), "{msg}");
    // No message anywhere on the page shows a code name.
    let all = s.js("return [...document.querySelectorAll('.field-error, [role=alert], .error')].map(e => e.textContent).join('\\n')").await;
    for line in all.as_str().unwrap_or_default().lines() {
        assert_plain_words(line);
    }
    s.close().await;
}
