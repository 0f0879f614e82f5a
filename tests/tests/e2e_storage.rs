//! Browser end-to-end: no edit is ever lost to another tab or to storage trouble.
//!
//! - Another tab saves a newer revision of the open design just before this tab's next edit is
//!   saved: both versions are kept (theirs under the design, this tab's as a conflict copy), with a
//!   message; deleting a design another tab has changed does not delete their version.
//! - Storage unreadable at load: the page says so and shows no notebook as if it were the saved
//!   one; once storage is readable again every design is still there.
//! - Storage full at load: the stored designs are shown, the page says writes are refused, and
//!   nothing stored is lost.
//! - A set-aside (damaged) record can be downloaded as it is stored.

use hysteron_tests::browser::{self, Session};
use std::time::Duration;

async fn list_names(s: &Session) -> String {
    s.js("return [...document.querySelectorAll('#design-list .design-name')].map(e => e.textContent).join('|')").await.to_string()
}

/// Every stored design's (name, Rf) as JSON text.
async fn stored(s: &Session) -> String {
    s.js(r#"return JSON.stringify(Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/')).sort()
            .map(k => { try { const d = JSON.parse(localStorage.getItem(k)); return [d.record.name, d.record.circuit.rf_ohm, d.revision]; }
                        catch (e) { return [k, 'unreadable']; } }))"#)
        .await
        .as_str()
        .unwrap_or("")
        .to_string()
}

async fn add_lathe(s: &Session) {
    let select = s.wait_for("#starter-choice").await;
    select.select_by_value("demo:lathe-tachometer").await.expect("choose starter");
    s.wait_for("#add-starter").await.click().await.expect("add");
    s.wait_for("#field-rf_ohm").await;
    tokio::time::sleep(Duration::from_millis(200)).await;
}

/// Writes "another tab's" save of the open design: the same record renamed, at a higher revision.
/// (Storage events only reach other tabs, so this tab sees it exactly as it would a save that
/// landed between two of its own edits.)
async fn their_save(s: &Session, name: &str) {
    let script = format!(
        r#"const k = Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/'))
               .find(k => JSON.parse(localStorage.getItem(k)).record.name.startsWith('Lathe'));
           const d = JSON.parse(localStorage.getItem(k));
           d.revision += 5; d.record.name = {name:?}; d.record.circuit.rf_ohm = 150000;
           localStorage.setItem(k, JSON.stringify(d)); return k;"#
    );
    s.js(&script).await;
}

#[tokio::test(flavor = "multi_thread")]
async fn concurrent_edits_in_two_tabs_keep_both_versions() {
    let s = browser::start().await;
    add_lathe(&s).await;
    their_save(&s, "Lathe (edited in the other tab)").await;
    // This tab edits the same design before hearing of their save (one input event, as a paste:
    // the refused save moves this tab to its conflict copy, and keys typed after that land there).
    s.js("const f = document.querySelector('#field-rf_ohm'); f.value = '33k'; f.dispatchEvent(new Event('input', { bubbles: true })); return 1;").await;
    tokio::time::sleep(Duration::from_millis(400)).await;
    let all = stored(&s).await;
    assert!(all.contains("\"Lathe (edited in the other tab)\",150000"), "their version was not kept: {all}");
    assert!(all.contains("(this tab's version)\",33000"), "this tab's edit was lost: {all}");
    let banner = s.text("#storage-banner").await;
    assert!(banner.contains("Both versions are kept") && banner.contains("this tab's version"), "{banner}");
    let names = list_names(&s).await;
    assert!(names.contains("Lathe (edited in the other tab)") && names.contains("this tab's version"), "{names}");
    // Both survive a reload.
    s.reload().await;
    let names = list_names(&s).await;
    assert!(names.contains("Lathe (edited in the other tab)") && names.contains("this tab's version"), "{names}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn two_real_tabs_editing_the_same_design_keep_both_versions() {
    let s = browser::start().await;
    add_lathe(&s).await;
    let first = s.client.window().await.unwrap();
    let second = s.client.new_window(true).await.unwrap();
    s.client.switch_to_window(second.handle.clone()).await.unwrap();
    s.client.goto(&s.base).await.unwrap();
    s.wait_for("#design-name").await;
    // Open the lathe design in tab two and rename it there.
    s.js("[...document.querySelectorAll('#design-list .design-pick')].find(b => b.textContent.includes('Lathe')).click(); return 1;").await;
    s.wait_for("#field-rf_ohm").await;
    s.type_into("#design-name", "Lathe renamed in tab two").await;
    tokio::time::sleep(Duration::from_millis(300)).await;
    // Tab one edits; whether or not it has heard of tab two's save, nothing may be lost.
    s.client.switch_to_window(first).await.unwrap();
    s.type_into("#field-rf_ohm", "47k").await;
    tokio::time::sleep(Duration::from_millis(400)).await;
    let all = stored(&s).await;
    assert!(all.contains("Lathe renamed in tab two"), "tab two's rename was lost: {all}");
    assert!(all.contains(",47000,"), "tab one's edit was lost: {all}");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn deleting_a_design_another_tab_changed_keeps_their_version() {
    let s = browser::start().await;
    add_lathe(&s).await;
    their_save(&s, "Lathe (kept by the other tab)").await;
    s.wait_for("#design-list li.open button.del").await.click().await.unwrap();
    tokio::time::sleep(Duration::from_millis(300)).await;
    let all = stored(&s).await;
    assert!(all.contains("Lathe (kept by the other tab)"), "their newer version was deleted: {all}");
    let banner = s.text("#storage-banner").await;
    assert!(banner.contains("was not deleted"), "{banner}");
    assert!(list_names(&s).await.contains("Lathe (kept by the other tab)"));
    s.close().await;
}

async fn before_every_load(s: &Session, source: &str) -> String {
    let v = s.devtools("Page.addScriptToEvaluateOnNewDocument", serde_json::json!({"source": source})).await;
    v["identifier"].as_str().unwrap_or_default().to_string()
}

async fn stop_before_every_load(s: &Session, id: &str) {
    s.devtools("Page.removeScriptToEvaluateOnNewDocument", serde_json::json!({"identifier": id})).await;
}

#[tokio::test(flavor = "multi_thread")]
async fn unreadable_storage_at_load_is_said_and_loses_nothing() {
    let s = browser::start().await;
    add_lathe(&s).await;
    let before = stored(&s).await;
    // Make every read of local storage throw from the next load on, as a browser that blocks site
    // data does.
    let id = before_every_load(
        &s,
        "for (const m of ['getItem', 'key', 'setItem', 'removeItem']) { Storage.prototype[m] = function () { throw new DOMException('blocked', 'SecurityError'); }; }
         Object.defineProperty(Storage.prototype, 'length', { get() { throw new DOMException('blocked', 'SecurityError'); } });",
    )
    .await;
    s.reload().await;
    let banner = s.text("#storage-banner").await;
    assert!(banner.contains("cannot be read"), "{banner}");
    let notice = s.text("#storage-unreadable").await;
    assert!(notice.contains("not your saved notebook"), "{notice}");
    assert!(!list_names(&s).await.contains("Lathe"));
    // Storage readable again: everything is still there, unchanged.
    stop_before_every_load(&s, &id).await;
    s.reload().await;
    assert_eq!(stored(&s).await, before, "stored designs changed while storage was unreadable");
    assert!(list_names(&s).await.contains("Lathe"));
    assert!(s.js("return document.querySelector('#storage-unreadable') === null").await.as_bool().unwrap_or(false));
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn full_storage_at_load_is_said_and_loses_nothing() {
    let s = browser::start().await;
    add_lathe(&s).await;
    let before = stored(&s).await;
    // Fill local storage to its quota.
    s.js(r#"const big = 'x'.repeat(256 * 1024); let i = 0;
            try { for (;;) { localStorage.setItem('filler/' + i, big); i++; } } catch (e) {}
            const small = 'x'.repeat(1024);
            try { for (;;) { localStorage.setItem('filler/s' + i, small); i++; } } catch (e) {}
            try { for (;;) { localStorage.setItem('filler/t' + i, 'x'); i++; } } catch (e) {}
            return i;"#)
        .await;
    s.reload().await;
    let banner = s.text("#storage-banner").await;
    assert!(banner.contains("refuses writes"), "{banner}");
    assert!(list_names(&s).await.contains("Lathe"), "stored designs not shown when storage is full");
    // An edit either fits (a design rewritten in place needs no new space) or the page says it was
    // not saved; either way every stored design is still there.
    s.js("[...document.querySelectorAll('#design-list .design-pick')].find(b => b.textContent.includes('Lathe')).click(); return 1;").await;
    s.type_into("#field-rf_ohm", "68k").await;
    tokio::time::sleep(Duration::from_millis(300)).await;
    let after = stored(&s).await;
    let banner = s.text("#storage-banner").await;
    assert!(after.contains("\"Lathe spindle tachometer\",68000") || banner.contains("could not save"), "{after} / {banner}");
    // Space freed: every design stored before is still there (with the edit when it was saved).
    s.js("Object.keys(localStorage).filter(k => k.startsWith('filler/')).forEach(k => localStorage.removeItem(k)); return 1;").await;
    s.reload().await;
    assert_eq!(stored(&s).await, after);
    let names = |t: &str| serde_json::from_str::<Vec<serde_json::Value>>(t).unwrap().iter().map(|d| d[0].clone()).collect::<Vec<_>>();
    assert_eq!(names(&after), names(&before));
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn a_set_aside_record_can_be_downloaded_as_stored() {
    let s = browser::start().await;
    let damaged = "{\"envelope_version\":1, \"id\": \"zzbroken\", oops";
    s.js(&format!("localStorage.setItem('hysteron/design/zzbroken', {damaged:?}); return 1;")).await;
    let future = r#"{"envelope_version":99,"id":"zzfuture","revision":1,"saved_at_ms":0,"record":{},"snapshot":null}"#;
    s.js(&format!("localStorage.setItem('hysteron/design/zzfuture', {future:?}); return 1;")).await;
    s.reload().await;
    let aside = s.text("#set-aside").await;
    assert!(aside.contains("zzbroken") && aside.contains("zzfuture"), "{aside}");
    // Catch the downloaded files' contents.
    s.js("window.__files = []; const make = URL.createObjectURL; URL.createObjectURL = b => { window.__files.push(b); return make(b); }; return 1;").await;
    s.js("document.querySelectorAll('#set-aside .set-aside-download').forEach(b => b.click()); return 1;").await;
    let texts = s
        .client
        .execute_async("const done = arguments[arguments.length - 1]; Promise.all(window.__files.map(b => b.text())).then(done);", vec![])
        .await
        .expect("read the downloads");
    let texts: Vec<String> = serde_json::from_value(texts).unwrap();
    assert!(texts.contains(&damaged.to_string()), "damaged item not downloaded as stored: {texts:?}");
    assert!(texts.contains(&future.to_string()), "newer-version item not downloaded as stored: {texts:?}");
    s.close().await;
}
