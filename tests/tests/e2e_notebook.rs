//! Browser end-to-end: the notebook as a user meets it — a design from every demo scenario shows
//! the thresholds `core` computes for it, delete and undo, undo/redo of edits, a damaged stored
//! record set aside while the others stay usable, saved-versus-now comparison, and two tabs.

use fantoccini::key::Key;
use hysteron_core::catalog;
use hysteron_core::evaluate::thresholds;
use hysteron_tests::browser::{self, Session};

async fn add_starter(s: &Session, value: &str) {
    s.add_starter(value).await;
}

async fn list_len(s: &Session) -> usize {
    s.js("return document.querySelectorAll('#design-list li').length").await.as_u64().unwrap_or(0) as usize
}

#[tokio::test(flavor = "multi_thread")]
async fn every_demo_scenario_opens_with_its_thresholds() {
    let s = browser::start().await;
    for demo in catalog::demos() {
        let expected = thresholds(&demo.record().circuit).expect("demo computes");
        add_starter(&s, &format!("demo:{}", demo.key)).await;
        let up = s.wait_number("#vt-upper", expected.vt_upper_v, 1e-9).await;
        let lo = s.wait_number("#vt-lower", expected.vt_lower_v, 1e-9).await;
        assert!((up - expected.vt_upper_v).abs() < 1e-9, "{}: VT+ {up} vs {}", demo.key, expected.vt_upper_v);
        assert!((lo - expected.vt_lower_v).abs() < 1e-9, "{}: VT− {lo} vs {}", demo.key, expected.vt_lower_v);
        let name = s.js("return document.querySelector('#design-name').value").await;
        assert_eq!(name.as_str(), Some(demo.record().name.as_str()));
        // The list row quotes the thresholds where the signal enters: at the field terminal when
        // the design has an input network, at the trigger's input otherwise.
        let record = demo.record();
        let (where_, vt) = match hysteron_core::input_network::from_record::record_network(&record) {
            Some(report) => ("at the field terminal VT+ ", report.expect("network computes").field),
            None => ("VT+ ", expected),
        };
        let want = format!("{where_}{:.3} V · VT− {:.3} V", vt.vt_upper_v, vt.vt_lower_v);
        s.wait_text("#design-list li.open .design-meta", &want, |t| t.contains(&want)).await;
        if demo.hazardous {
            let caution = s.text("#cautions").await;
            assert!(caution.contains("codes"), "{}: no safety caution shown", demo.key);
        }
    }
    // The blank design plus one per demo.
    assert_eq!(list_len(&s).await, 1 + catalog::demos().len());
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn delete_undo_and_edit_undo_redo() {
    let s = browser::start().await;
    add_starter(&s, "demo:lathe-tachometer").await;
    s.wait_for("#field-rf_ohm").await;
    assert_eq!(list_len(&s).await, 2);
    // Delete the open design, then bring it back.
    let del = s.wait_for("#design-list li.open button.del").await;
    del.click().await.unwrap();
    s.wait_js("delete to remove the design from the list", "return document.querySelectorAll('#design-list li').length === 1").await;
    s.wait_for("#undo-delete").await.click().await.unwrap();
    s.wait_js(
        "undo to restore the deleted design",
        "return [...document.querySelectorAll('#design-list .design-name')].some(e => e.textContent.includes('Lathe spindle tachometer'))",
    )
    .await;
    s.reload().await;
    assert_eq!(list_len(&s).await, 2, "restored design was not saved");

    // Undo and redo of an edit with the keyboard.
    let before = s.number("#vt-upper").await;
    s.type_into("#field-rf_ohm", "47k").await;
    s.wait_stored("r.circuit.rf_ohm === 47000").await;
    let after = s.wait_number_change("#vt-upper", before).await;
    assert!((after - before).abs() > 1e-3, "edit did not change VT+");
    let body = s.wait_for("body").await;
    body.send_keys(&format!("{}z", Key::Control)).await.ok();
    let undone = s.wait_number("#vt-upper", before, 1e-12).await;
    assert!((undone - before).abs() < 1e-12, "Ctrl+Z gave {undone}, expected {before}");
    body.send_keys(&format!("{}{}z", Key::Control, Key::Shift)).await.ok();
    let redone = s.wait_number("#vt-upper", after, 1e-12).await;
    assert!((redone - after).abs() < 1e-12, "Ctrl+Shift+Z gave {redone}, expected {after}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn damaged_record_is_set_aside_and_the_rest_keeps_working() {
    let s = browser::start().await;
    add_starter(&s, "demo:lathe-tachometer").await;
    s.wait_for("#field-rf_ohm").await;
    // Damage one stored design by hand, as a crashed writer or a hand edit would.
    s.js("localStorage.setItem('hysteron/design/zzbroken', '{\"envelope_version\":1, \"id\": \"zzbroken\", oops'); return 1;").await;
    s.reload().await;
    let aside = s.text("#set-aside").await;
    assert!(aside.contains("zzbroken") && aside.contains("damaged"), "no message for the damaged record: {aside}");
    // The damaged text is still in storage, untouched.
    let raw = s.js("return localStorage.getItem('hysteron/design/zzbroken')").await;
    assert!(raw.as_str().unwrap_or("").ends_with("oops"));
    // The good designs still load and still compute.
    assert_eq!(list_len(&s).await, 2);
    // (The reload reopens the lathe design, whose Rf is 220 k: change it to another value.)
    let before = s.number("#vt-upper").await;
    s.type_into("#field-rf_ohm", "150k").await;
    s.wait_stored("r.circuit.rf_ohm === 150000").await;
    let v = s.wait_number_change("#vt-upper", before).await;
    assert!(v.is_finite());
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn saved_figures_that_differ_from_todays_math_are_shown_side_by_side() {
    let s = browser::start().await;
    s.wait_for("#field-rf_ohm").await;
    // Rewrite the saved snapshot as if an older version had computed other thresholds.
    s.js(r#"const k = Object.keys(localStorage).find(k => k.startsWith('hysteron/design/'));
            const d = JSON.parse(localStorage.getItem(k));
            d.snapshot.vt_upper_v = 9.876; d.snapshot.computed_by = '0.0.1';
            localStorage.setItem(k, JSON.stringify(d)); return 1;"#)
        .await;
    s.reload().await;
    let msg = s.text("#saved-differs").await;
    assert!(msg.contains("9.8760") && msg.contains("0.0.1"), "comparison not shown: {msg}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn two_tabs_see_each_others_changes() {
    let s = browser::start().await;
    s.wait_for("#design-name").await;
    let first = s.client.window().await.unwrap();
    let second = s.client.new_window(true).await.unwrap();
    s.client.switch_to_window(second.handle).await.unwrap();
    s.client.goto(&s.base).await.unwrap();
    s.wait_for("#design-name").await;
    s.type_into("#design-name", "Renamed in tab two").await;
    s.wait_stored("r.name === 'Renamed in tab two'").await;
    s.client.switch_to_window(first).await.unwrap();
    s.wait_js(
        "tab one to take in tab two's change",
        "return [...document.querySelectorAll('#design-list .design-name')].some(e => e.textContent.includes('Renamed in tab two'))",
    )
    .await;
    // Tab one now edits on top of tab two's version instead of overwriting it with an old one.
    s.type_into("#field-rf_ohm", "33k").await;
    s.wait_stored("r.circuit.rf_ohm === 33000").await;
    let stored = s.js("const k = Object.keys(localStorage).find(k => k.startsWith('hysteron/design/')); return JSON.parse(localStorage.getItem(k)).record.name").await;
    assert_eq!(stored.as_str(), Some("Renamed in tab two"));
    s.close().await;
}
