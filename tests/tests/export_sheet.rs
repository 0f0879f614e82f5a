//! The printable exports: the SVG schematic (`hysteron_core::schematic`) and the bench procedure
//! (`hysteron_core::bench`).
//! (a) every design in both symbol styles is well-formed XML (parsed with roxmltree, a
//!     general-purpose XML 1.0 parser), and every designator of the part list and every device
//!     appears as text;
//! (b) the IEC style's values are IEC 60062 RKM codes that read back (parser written here from the
//!     standard's rule, DOMAIN §3, from memory) to the part values within four significant digits;
//! (c) a design name full of markup (`<script>`, `&`, quotes) appears as text only: it parses
//!     back to exactly the same string and creates no element;
//! (d) the bench procedure's expected readings are the analysis's thresholds for every design.

use hysteron_core::bench::{bench_procedure, ReadingWindows};
use hysteron_core::netlist::Netlisted;
use hysteron_core::schematic::{engineering_ohms, render_svg, render_svg_titled, SymbolStyle};
use hysteron_core::topology::{analyse, Circuit};
use hysteron_tests::designs::variety;

/// Reads an IEC 60062 RKM code: `^(\d*)([RKMGT])(\d*)$`, the letter standing for the decimal
/// point and the multiplier (R 1, K 1e3, M 1e6, G 1e9, T 1e12); at least one digit.
fn parse_rkm(code: &str) -> Option<f64> {
    let pos = code.find(|c: char| "RKMGT".contains(c))?;
    let (int, rest) = code.split_at(pos);
    let letter = rest.chars().next()?;
    let frac = &rest[1..];
    if int.is_empty() && frac.is_empty() || !int.chars().chain(frac.chars()).all(|c| c.is_ascii_digit()) {
        return None;
    }
    let mult = match letter {
        'R' => 1.0,
        'K' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        _ => 1e12,
    };
    let number: f64 =
        format!("{}.{}", if int.is_empty() { "0" } else { int }, if frac.is_empty() { "0" } else { frac })
            .parse()
            .ok()?;
    Some(number * mult)
}

fn texts(svg: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("not well-formed XML: {e}"));
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    assert_eq!(doc.root_element().tag_name().namespace(), Some("http://www.w3.org/2000/svg"));
    doc.descendants().filter(|n| n.has_tag_name("text")).map(|n| n.text().unwrap_or("").to_string()).collect()
}

#[test]
fn rkm_reader_follows_the_standard_examples() {
    // IEC 60062 examples (from memory; DOMAIN §3).
    assert_eq!(parse_rkm("4K7"), Some(4700.0));
    assert_eq!(parse_rkm("R47"), Some(0.47));
    assert_eq!(parse_rkm("2M2"), Some(2.2e6));
    assert_eq!(parse_rkm("100R"), Some(100.0));
    assert_eq!(parse_rkm("4K99"), Some(4990.0));
    assert_eq!(parse_rkm("4.7K"), None);
    assert_eq!(parse_rkm("K"), None);
}

#[test]
fn every_schematic_is_xml_with_every_designator_and_value() {
    for (key, c) in variety() {
        let parts: Vec<_> = c.parameters().into_iter().filter(|p| p.designator.is_some()).collect();
        let devices: Vec<String> = c.netlist().devices.iter().map(|d| d.designator().to_string()).collect();
        for style in [SymbolStyle::Iec60617, SymbolStyle::Ieee315] {
            let t = texts(&render_svg(&c, style));
            for p in &parts {
                let d = p.designator.as_deref().unwrap();
                let at = t.iter().position(|x| x == d).unwrap_or_else(|| panic!("{key} {style:?}: {d} not drawn"));
                // The value is written right after the designator.
                let value = &t[at + 1];
                match style {
                    SymbolStyle::Iec60617 => {
                        let ohm = parse_rkm(value).unwrap_or_else(|| panic!("{key}: {value} is not an RKM code"));
                        assert!(
                            (ohm - p.value).abs() <= 5e-4 * p.value,
                            "{key}: {d} drawn as {value}, part {}",
                            p.value
                        );
                    }
                    SymbolStyle::Ieee315 => assert_eq!(value, &engineering_ohms(p.value), "{key}: {d}"),
                }
            }
            for d in &devices {
                assert!(t.contains(d), "{key} {style:?}: {d} not drawn");
            }
            assert!(
                t.iter().any(|x| x == "IN") && t.iter().any(|x| x == "OUT"),
                "{key}: input or output label missing"
            );
        }
    }
}

#[test]
fn markup_in_the_design_name_stays_text() {
    let name = r#"<script>alert("x")</script> R&D's <b>bench</b> &amp; ]]>"#;
    for (key, c) in variety().into_iter().take(3) {
        for style in [SymbolStyle::Iec60617, SymbolStyle::Ieee315] {
            let svg = render_svg_titled(&c, style, name);
            assert!(!svg.contains("<script"), "{key}: raw markup in the SVG");
            let doc = roxmltree::Document::parse(&svg).unwrap();
            assert!(doc.descendants().all(|n| !n.has_tag_name("script") && !n.has_tag_name("b")));
            // The heading reads back to exactly the name; the <title> starts with it.
            assert!(doc.descendants().any(|n| n.has_tag_name("text") && n.text() == Some(name)), "{key}");
            let title = doc.descendants().find(|n| n.has_tag_name("title")).and_then(|n| n.text()).unwrap();
            assert!(title.starts_with(name));
        }
    }
}

#[test]
fn bench_readings_are_the_analysis_thresholds_for_every_design() {
    for (key, c) in variety() {
        let checks = hysteron_core::analysis::CheckSettings {
            supply_min_v: Some(c.supply_v() * 0.95),
            supply_max_v: Some(c.supply_v() * 1.05),
            ..Default::default()
        };
        let a = analyse(&c, &checks).unwrap();
        let p = bench_procedure(&c, &checks, &ReadingWindows::default()).unwrap();
        assert_eq!(p.readings.len(), 6, "{key}: nominal and both supply ends");
        for corner in &a.supply_corners {
            let at: Vec<_> = p.readings.iter().filter(|r| r.supply_v == corner.supply_v).collect();
            assert_eq!(at.len(), 2, "{key}");
            assert_eq!(at[0].nominal_v, corner.vt_upper_v, "{key}");
            assert_eq!(at[1].nominal_v, corner.vt_lower_v, "{key}");
        }
        // The ramp covers both thresholds at every supply, and the step resolves the hysteresis.
        for r in &p.readings {
            assert!(
                p.ramp_low_v < r.nominal_v && r.nominal_v < p.ramp_high_v,
                "{key}: {} outside the ramp",
                r.nominal_v
            );
        }
        assert!(
            p.step_v <= a.hysteresis_v.abs().max(1e-4) / 10.0,
            "{key}: step {} for ΔV {}",
            p.step_v,
            a.hysteresis_v
        );
        let text = p.to_text();
        assert!(
            text.contains(&format!("{:.3} V", a.vt_upper_v)) && text.contains(&format!("{:.3} V", a.vt_lower_v)),
            "{key}"
        );
    }
}
