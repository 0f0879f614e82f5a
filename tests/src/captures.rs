//! Capture files for the import tests: what a bench oscilloscope's CSV export of a slow sine looks like.

/// A semicolon-separated capture with the header line `header` and `rows` samples `step_s` apart of
/// a 5 Hz sine, 2.3 V ± 1.5 V (time to the microsecond, volts to 10 µV).
pub fn sine_capture_csv(header: &str, rows: u32, step_s: f64) -> String {
    let mut text = format!("{header}\n");
    for i in 0..rows {
        let t = f64::from(i) * step_s;
        text.push_str(&format!("{t:.6};{:.5}\n", 2.3 + 1.5 * (2.0 * std::f64::consts::PI * 5.0 * t).sin()));
    }
    text
}
