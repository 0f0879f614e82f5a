//! Browser end-to-end: the design leaves the browser — a share link opens read-only and can be
//! kept, a damaged or future link harms nothing, the schematic shows every part in both symbol
//! styles, a hostile design file is shown as text, and every demo design prints on one page of A4
//! and of US Letter (page count read with pdfinfo from poppler-utils).

use fantoccini::wd::{PrintConfiguration, PrintSize};
use hysteron_core::catalog;
use hysteron_core::topology::Circuit;
use hysteron_tests::browser::{self, Session};

async fn add_demo(s: &Session, key: &str) {
    s.add_starter(&format!("demo:{key}")).await;
}

async fn stored_count(s: &Session) -> u64 {
    s.js("return Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/')).length").await.as_u64().unwrap_or(0)
}

#[tokio::test(flavor = "multi_thread")]
async fn share_link_opens_read_only_and_can_be_kept() {
    let s = browser::start().await;
    add_demo(&s, "cabin-battery").await;
    let expected_up = s.number("#vt-upper").await;
    s.wait_for("#make-link").await.click().await.unwrap();
    let link = s.wait_for("#share-link").await.prop("value").await.unwrap().unwrap_or_default();
    assert!(link.contains("#h1."), "not a Hysteron link: {link}");
    let before = stored_count(&s).await;

    // Open the link: the design shows read-only with its thresholds; nothing is saved yet.
    s.client.goto(&link).await.unwrap();
    s.wait_for("#shared-design").await;
    let up = s.number("#shared-vt-upper").await;
    assert!((up - expected_up).abs() < 1e-12, "shared design shows VT+ {up}, expected {expected_up}");
    assert_eq!(stored_count(&s).await, before);
    s.wait_for("#keep-shared").await.click().await.unwrap();
    s.wait_js(
        "keeping the shared design to save a copy",
        &format!("return Object.keys(localStorage).filter(k => k.startsWith('hysteron/design/')).length === {}", before + 1),
    )
    .await;
    let hash = s.js("return location.hash").await;
    assert_eq!(hash.as_str(), Some(""), "the fragment should be cleared after keeping");

    // A damaged link (one character changed) and a future-version link: a message, nothing harmed.
    let payload = link.split('#').nth(1).unwrap().to_string();
    let mut chars: Vec<char> = payload.chars().collect();
    let i = chars.len() / 2;
    chars[i] = if chars[i] == 'A' { 'B' } else { 'A' };
    let damaged: String = chars.into_iter().collect();
    let base = link.split('#').next().unwrap().to_string();
    let keys_before = s.js("return Object.keys(localStorage).sort().join('|')").await;
    for (bad, word) in [(damaged, "could not be opened"), (format!("h9.{}", &payload[3..]), "newer")] {
        s.client.goto(&format!("{base}#{bad}")).await.unwrap();
        s.client.refresh().await.unwrap();
        let msg = s.text("#link-error").await;
        assert!(msg.contains(word) || msg.contains("could not be opened"), "link error: {msg}");
        assert!(msg.contains("Nothing in your notebook was changed"));
    }
    let keys_after = s.js("return Object.keys(localStorage).sort().join('|')").await;
    assert_eq!(keys_before, keys_after, "a bad link changed storage");
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn schematic_shows_every_part_in_both_symbol_styles() {
    let s = browser::start().await;
    for demo in catalog::demos() {
        add_demo(&s, demo.key).await;
        let designators: Vec<String> = demo.record().circuit.parameters().into_iter().filter_map(|p| p.designator).collect();
        for style in ["iec60617", "ieee315"] {
            // The schematic is built just after the rest of the design (its own piece of the page).
            s.wait_for("#schematic").await;
            let was = s.js("return [document.querySelector('#symbol-style').value, document.querySelector('#schematic').getAttribute('src')]").await;
            s.wait_for("#symbol-style").await.select_by_value(style).await.unwrap();
            if was[0].as_str() != Some(style) {
                // Another style was shown: wait for the drawing to change.
                s.wait_js(
                    &format!("{}: the schematic to be redrawn in {style}", demo.key),
                    &format!("return document.querySelector('#schematic').getAttribute('src') !== {}", was[1]),
                )
                .await;
            }
            let svg = s.js("const src = document.querySelector('#schematic').getAttribute('src'); return decodeURIComponent(src.split(',').slice(1).join(','));").await;
            let svg = svg.as_str().unwrap_or_default().to_string();
            assert!(svg.starts_with("<svg") || svg.starts_with("<?xml"), "{}: not an SVG", demo.key);
            for d in &designators {
                assert!(svg.contains(&format!(">{d}<")), "{} ({style}): {d} missing from the schematic", demo.key);
            }
        }
    }
    s.close().await;
}

#[tokio::test(flavor = "multi_thread")]
async fn hostile_design_file_is_shown_as_text() {
    let dir = std::env::temp_dir().join(format!("hysteron-hostile-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let mut record = catalog::templates()[0].record();
    let name = "<img src=x onerror=\"document.title='owned'\"> & friends";
    record.name = name.into();
    let good = dir.join("hostile.json");
    std::fs::write(&good, record.to_json()).unwrap();
    let bad = dir.join("broken.json");
    std::fs::write(&bad, "{\"schema_version\": 1, \"name\": 3}").unwrap();

    let s = browser::start().await;
    s.wait_for("#import-json").await.send_keys(bad.to_str().unwrap()).await.unwrap();
    let err = s.text("#import-error").await;
    assert!(err.contains("not a design"), "{err}");
    s.wait_for("#import-json").await.send_keys(good.to_str().unwrap()).await.unwrap();
    s.wait_js(
        "the imported design to be listed",
        "return [...document.querySelectorAll('#design-list .design-name')].some(e => e.textContent.includes('onerror'))",
    )
    .await;
    let shown = s.js("return [...document.querySelectorAll('#design-list .design-name')].map(e => e.textContent)").await;
    assert!(shown.to_string().contains("onerror"), "imported name not listed as text: {shown}");
    let injected = s.js("return document.querySelectorAll('#design-list img, #design img:not(.schematic):not(.sheet-schematic)').length").await;
    assert_eq!(injected.as_u64(), Some(0), "markup from a design name reached the page");
    let title = s.js("return document.title").await;
    assert_eq!(title.as_str(), Some("Hysteron"));
    let _ = std::fs::remove_dir_all(&dir);
    s.close().await;
}

fn pdf_pages(pdf: &[u8], name: &str) -> u32 {
    let path = std::env::temp_dir().join(format!("hysteron-{}-{name}.pdf", std::process::id()));
    std::fs::write(&path, pdf).unwrap();
    let out = std::process::Command::new("pdfinfo").arg(&path).output().expect("pdfinfo (poppler-utils) runs");
    let text = String::from_utf8_lossy(&out.stdout).to_string();
    let _ = std::fs::remove_file(&path);
    text.lines()
        .find_map(|l| l.strip_prefix("Pages:").map(|v| v.trim().parse().unwrap_or(0)))
        .unwrap_or_else(|| panic!("pdfinfo gave no page count: {text}"))
}

/// The text of a PDF (pdftotext, poppler-utils), whitespace collapsed.
fn pdf_text(pdf: &[u8], name: &str) -> String {
    let path = std::env::temp_dir().join(format!("hysteron-{}-{name}-text.pdf", std::process::id()));
    std::fs::write(&path, pdf).unwrap();
    let out = std::process::Command::new("pdftotext").arg(&path).arg("-").output().expect("pdftotext (poppler-utils) runs");
    let _ = std::fs::remove_file(&path);
    String::from_utf8_lossy(&out.stdout).split_whitespace().collect::<Vec<_>>().join(" ")
}

/// The last `n` words of `text`, as one string.
fn last_words(text: &str, n: usize) -> String {
    let w: Vec<&str> = text.split_whitespace().collect();
    w[w.len().saturating_sub(n)..].join(" ")
}

#[tokio::test(flavor = "multi_thread")]
async fn every_demo_prints_on_one_page_of_a4_and_letter() {
    let s = browser::start().await;
    let mut report = Vec::new();
    for demo in catalog::demos() {
        add_demo(&s, demo.key).await;
        // The browser fires `beforeprint` when the user prints; the sheet then adds its slower figures.
        s.js("window.dispatchEvent(new Event('beforeprint')); return 1;").await;
        s.wait_js(
            &format!("{}: the print sheet to show its thresholds", demo.key),
            "const e = document.querySelector('#sheet-vt-upper'); return !!e && e.textContent.endsWith(' V')",
        )
        .await;
        for (size, label) in [(PrintSize::A4, "a4"), (PrintSize::US_LETTER, "letter")] {
            let cfg = PrintConfiguration::builder().size(size).shrink_to_fit(false).background(true).build().unwrap();
            let pdf = s.client.print(cfg).await.expect("print to PDF");
            let pages = pdf_pages(&pdf, &format!("{}-{label}", demo.key));
            report.push(format!("{} {label}: {pages}", demo.key));
            assert_eq!(pages, 1, "{} on {label} prints on {pages} pages", demo.key);
            // One page, and nothing cut off at its foot: the last bench step, the troubleshooting
            // and the notes are all on the paper.
            let printed = pdf_text(&pdf, &format!("{}-{label}", demo.key));
            let ends = s
                .js("const q = c => { const e = document.querySelector(c); return e ? e.textContent : ''; }; \
                     return [q('#sheet-bench-steps li:last-child'), q('#design-sheet .sheet-bench p:last-child'), q('#design-sheet .sheet-notes')];")
                .await;
            for end in ends.as_array().unwrap().iter().filter_map(|e| e.as_str()).filter(|e| !e.trim().is_empty()) {
                let tail = last_words(end, 6);
                assert!(printed.contains(&tail), "{} on {label}: the sheet is cut off — {tail:?} is not on the paper, which ends {:?}", demo.key, last_words(&printed, 12));
            }
        }
    }
    println!("page counts: {}", report.join(", "));
    s.close().await;
}
