//! Drawing the series that `core` produces onto canvases with plotters-canvas, sized for the
//! screen's device-pixel ratio so lines stay crisp on high-DPI screens.

use hysteron_core::topology::TransferCurve;
use plotters::coord::ranged1d::Ranged;
use plotters::prelude::*;
use plotters_canvas::CanvasBackend;
use web_sys::HtmlCanvasElement;

/// Palette of the page's plots.
pub mod colours {
    use plotters::style::RGBColor;
    /// Rising-input branch.
    pub const RISING: RGBColor = RGBColor(0x1f, 0x6f, 0x8b);
    /// Falling-input branch.
    pub const FALLING: RGBColor = RGBColor(0xc2, 0x5b, 0x1d);
    /// Threshold markers.
    pub const THRESHOLD: RGBColor = RGBColor(0x6b, 0x6b, 0x6b);
    /// Grid and axes text.
    pub const INK: RGBColor = RGBColor(0x22, 0x2a, 0x30);
}

/// Sizes the canvas's backing store to its CSS size × device-pixel ratio; returns the ratio.
pub fn fit_canvas(canvas: &HtmlCanvasElement) -> f64 {
    let dpr = web_sys::window().map(|w| w.device_pixel_ratio()).unwrap_or(1.0).max(1.0);
    let w = canvas.client_width().max(200) as f64;
    let h = canvas.client_height().max(150) as f64;
    canvas.set_width((w * dpr).round() as u32);
    canvas.set_height((h * dpr).round() as u32);
    dpr
}

/// Where a chart's data area lies on its canvas, so a pointer position can be turned back into
/// data values (the hover readout).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PlotFrame {
    /// Left and right edge of the data area, canvas backing pixels.
    pub px_x: (i32, i32),
    /// Top and bottom edge of the data area, canvas backing pixels.
    pub px_y: (i32, i32),
    /// Data range along x (left, right).
    pub x: (f64, f64),
    /// Data range along y (bottom, top).
    pub y: (f64, f64),
    /// Backing pixels per CSS pixel.
    pub dpr: f64,
}

impl PlotFrame {
    /// The data values under a pointer at CSS-pixel offset (ox, oy) in the canvas, if inside the area.
    pub fn value_at(&self, ox: f64, oy: f64) -> Option<(f64, f64)> {
        let (px, py) = (ox * self.dpr, oy * self.dpr);
        let (l, r) = (self.px_x.0 as f64, self.px_x.1 as f64);
        let (t, b) = (self.px_y.0 as f64, self.px_y.1 as f64);
        if !(px >= l && px <= r && py >= t && py <= b) || r <= l || b <= t {
            return None;
        }
        let x = self.x.0 + (px - l) / (r - l) * (self.x.1 - self.x.0);
        let y = self.y.1 - (py - t) / (b - t) * (self.y.1 - self.y.0);
        Some((x, y))
    }
}

fn frame_of<DB: DrawingBackend, X: Ranged<ValueType = f64>, Y: Ranged<ValueType = f64>>(
    chart: &ChartContext<'_, DB, Cartesian2d<X, Y>>,
    x: (f64, f64),
    y: (f64, f64),
    dpr: f64,
) -> PlotFrame {
    let (rx, ry) = chart.plotting_area().get_pixel_range();
    PlotFrame { px_x: (rx.start, rx.end), px_y: (ry.start, ry.end), x, y, dpr }
}

fn err<E: std::fmt::Display>(e: E) -> String {
    format!("plot: {e}")
}

/// Draws the hysteresis loop: both branches, direction arrows, and the thresholds marked.
pub fn draw_transfer(canvas: &HtmlCanvasElement, curve: &TransferCurve) -> Result<PlotFrame, String> {
    let dpr = fit_canvas(canvas);
    let backend = CanvasBackend::with_canvas_object(canvas.clone()).ok_or("plot: no 2D canvas")?;
    transfer_on(backend.into_drawing_area(), curve, dpr)
}

/// Draws the transfer curve into a canvas of a fixed backing size (for the print sheet, whose
/// canvas has no on-screen size to measure); `scale` multiplies line widths and fonts.
pub fn draw_transfer_fixed(canvas: &HtmlCanvasElement, curve: &TransferCurve, width: u32, height: u32, scale: f64) -> Result<PlotFrame, String> {
    canvas.set_width(width);
    canvas.set_height(height);
    let backend = CanvasBackend::with_canvas_object(canvas.clone()).ok_or("plot: no 2D canvas")?;
    transfer_on(backend.into_drawing_area(), curve, scale)
}

/// The transfer curve as an SVG document (for the file export), 720 × 400 px.
pub fn transfer_svg(curve: &TransferCurve) -> Result<String, String> {
    let mut out = String::new();
    {
        let backend = plotters::backend::SVGBackend::with_string(&mut out, (720, 400));
        transfer_on(backend.into_drawing_area(), curve, 1.0)?;
    }
    Ok(out)
}

fn transfer_on<DB: DrawingBackend>(
    root: DrawingArea<DB, plotters::coord::Shift>,
    curve: &TransferCurve,
    dpr: f64,
) -> Result<PlotFrame, String> {
    root.fill(&WHITE).map_err(err)?;
    let xs = curve.rising.iter().chain(curve.falling.iter()).map(|p| p.vin_v);
    let ys = curve.rising.iter().chain(curve.falling.iter()).map(|p| p.vout_v);
    let (mut x0, mut x1) = xs.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| (a.min(x), b.max(x)));
    let (mut y0, mut y1) = ys.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), y| (a.min(y), b.max(y)));
    if !(x0.is_finite() && x1.is_finite() && y0.is_finite() && y1.is_finite()) {
        return Err("plot: nothing to draw".into());
    }
    let px = ((x1 - x0) * 0.06).max(1e-3);
    let py = ((y1 - y0) * 0.12).max(1e-3);
    x0 -= px;
    x1 += px;
    y0 -= py;
    y1 += py;
    let font = (12.0 * dpr) as u32;
    let mut chart = ChartBuilder::on(&root)
        .margin((10.0 * dpr) as u32)
        .x_label_area_size((34.0 * dpr) as u32)
        .y_label_area_size((44.0 * dpr) as u32)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc("input (V)")
        .y_desc("output (V)")
        .label_style(("sans-serif", font).into_font().color(&colours::INK))
        .axis_desc_style(("sans-serif", font).into_font().color(&colours::INK))
        .light_line_style(RGBColor(0xee, 0xee, 0xee))
        .draw()
        .map_err(err)?;
    let frame = frame_of(&chart, (x0, x1), (y0, y1), dpr);
    let stroke = (2.0 * dpr) as u32;
    for (vt, name, dy) in [(curve.vt_upper_v, "VT+", 0.4), (curve.vt_lower_v, "VT−", 1.4)] {
        chart
            .draw_series(DashedLineSeries::new(
                vec![(vt, y0), (vt, y1)],
                (4.0 * dpr) as u32,
                (4.0 * dpr) as u32,
                colours::THRESHOLD.stroke_width(dpr.max(1.0) as u32),
            ))
            .map_err(err)?;
        chart
            .draw_series(std::iter::once(Text::new(
                format!("{name} {vt:.3} V"),
                (vt, y1 - py * dy),
                ("sans-serif", font).into_font().color(&colours::INK),
            )))
            .map_err(err)?;
    }
    for (branch, colour) in [(&curve.rising, colours::RISING), (&curve.falling, colours::FALLING)] {
        let pts: Vec<(f64, f64)> = branch.iter().map(|p| (p.vin_v, p.vout_v)).collect();
        chart.draw_series(LineSeries::new(pts.clone(), colour.stroke_width(stroke))).map_err(err)?;
        // Direction marks: a filled triangle on the branch's first horizontal run (the part of the
        // loop only this branch traces), pointing the way the input moves.
        let at = 0.5;
        if let Some(w) = pts.windows(2).find(|w| (w[0].1 - w[1].1).abs() < 1e-12 && (w[1].0 - w[0].0).abs() > 1e-12) {
            let ((xa, ya), (xb, _)) = (w[0], w[1]);
            {
                let (lo, hi) = (xa.min(xb), xa.max(xb));
                let xm = lo + (hi - lo) * at;
                let dir = (xb - xa).signum();
                let dx = (x1 - x0) * 0.018 * dir;
                let dy = (y1 - y0) * 0.035;
                chart
                    .draw_series(std::iter::once(Polygon::new(
                        vec![(xm + dx, ya), (xm - dx, ya + dy), (xm - dx, ya - dy)],
                        colour.filled(),
                    )))
                    .map_err(err)?;
            }
        }
    }
    root.present().map_err(err)?;
    Ok(frame)
}

/// Draws a histogram of Monte Carlo results with the spec window's limits marked.
pub fn draw_histogram(
    canvas: &HtmlCanvasElement,
    hist: &hysteron_core::tolerance::monte_carlo::Histogram,
    x_label: &str,
    spec_min: Option<f64>,
    spec_max: Option<f64>,
) -> Result<PlotFrame, String> {
    let dpr = fit_canvas(canvas);
    let backend = CanvasBackend::with_canvas_object(canvas.clone()).ok_or("plot: no 2D canvas")?;
    let root = backend.into_drawing_area();
    root.fill(&WHITE).map_err(err)?;
    let n = hist.counts.len();
    if n == 0 || hist.upper_v.partial_cmp(&hist.lower_v) != Some(std::cmp::Ordering::Greater) {
        return Err("plot: empty histogram".into());
    }
    let mut x0 = hist.lower_v;
    let mut x1 = hist.upper_v;
    for v in [spec_min, spec_max].into_iter().flatten() {
        x0 = x0.min(v);
        x1 = x1.max(v);
    }
    let pad = (x1 - x0) * 0.05;
    let ymax = hist.counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.1;
    let font = (11.0 * dpr) as u32;
    let mut chart = ChartBuilder::on(&root)
        .margin((8.0 * dpr) as u32)
        .x_label_area_size((30.0 * dpr) as u32)
        .y_label_area_size((44.0 * dpr) as u32)
        .build_cartesian_2d((x0 - pad)..(x1 + pad), 0.0..ymax)
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc(x_label)
        .y_desc("trials")
        .label_style(("sans-serif", font).into_font().color(&colours::INK))
        .axis_desc_style(("sans-serif", font).into_font().color(&colours::INK))
        .light_line_style(RGBColor(0xee, 0xee, 0xee))
        .draw()
        .map_err(err)?;
    let frame = frame_of(&chart, (x0 - pad, x1 + pad), (0.0, ymax), dpr);
    chart
        .draw_series(hist.counts.iter().enumerate().map(|(i, &c)| {
            let a = hist.lower_v + i as f64 * hist.bin_width_v;
            Rectangle::new([(a, 0.0), (a + hist.bin_width_v, c as f64)], colours::RISING.mix(0.75).filled())
        }))
        .map_err(err)?;
    for v in [spec_min, spec_max].into_iter().flatten() {
        chart
            .draw_series(LineSeries::new(vec![(v, 0.0), (v, ymax)], colours::FALLING.stroke_width((2.0 * dpr) as u32)))
            .map_err(err)?;
    }
    root.present().map_err(err)?;
    Ok(frame)
}

/// One trace of the time-domain view: a min/max envelope over the visible window.
pub struct Trace<'a> {
    /// Envelope to draw.
    pub envelope: &'a hysteron_core::signal::plot::Envelope,
    /// Colour.
    pub colour: RGBColor,
    /// Vertical offset added for display, volts (to stack outputs under the input).
    pub offset_v: f64,
    /// Scale applied before the offset (outputs are drawn at a fraction of their swing).
    pub scale: f64,
}

/// Draws the time-domain view: the input (and stacked outputs) with the thresholds as lines and
/// the given edge times as ticks. `t0..t1` is the visible window in seconds.
pub fn draw_time(
    canvas: &HtmlCanvasElement,
    t0: f64,
    t1: f64,
    traces: &[Trace<'_>],
    thresholds: (f64, f64),
    marks: &[(f64, RGBColor)],
) -> Result<PlotFrame, String> {
    let dpr = fit_canvas(canvas);
    let backend = CanvasBackend::with_canvas_object(canvas.clone()).ok_or("plot: no 2D canvas")?;
    let root = backend.into_drawing_area();
    root.fill(&WHITE).map_err(err)?;
    let mut y0 = f64::INFINITY;
    let mut y1 = f64::NEG_INFINITY;
    for t in traces {
        for (&a, &b) in t.envelope.min_v.iter().zip(&t.envelope.max_v) {
            y0 = y0.min(a * t.scale + t.offset_v);
            y1 = y1.max(b * t.scale + t.offset_v);
        }
    }
    y0 = y0.min(thresholds.1);
    y1 = y1.max(thresholds.0);
    if !(y0.is_finite() && y1.is_finite() && t1 > t0) {
        return Err("plot: nothing to draw".into());
    }
    let pad = ((y1 - y0) * 0.08).max(1e-3);
    let font = (11.0 * dpr) as u32;
    let mut chart = ChartBuilder::on(&root)
        .margin((8.0 * dpr) as u32)
        .x_label_area_size((30.0 * dpr) as u32)
        .y_label_area_size((44.0 * dpr) as u32)
        .build_cartesian_2d(t0..t1, (y0 - pad)..(y1 + pad))
        .map_err(err)?;
    chart
        .configure_mesh()
        .x_desc("time (s)")
        .y_desc("V")
        .label_style(("sans-serif", font).into_font().color(&colours::INK))
        .axis_desc_style(("sans-serif", font).into_font().color(&colours::INK))
        .light_line_style(RGBColor(0xee, 0xee, 0xee))
        .draw()
        .map_err(err)?;
    let frame = frame_of(&chart, (t0, t1), (y0 - pad, y1 + pad), dpr);
    for v in [thresholds.0, thresholds.1] {
        chart
            .draw_series(DashedLineSeries::new(vec![(t0, v), (t1, v)], (5.0 * dpr) as u32, (4.0 * dpr) as u32, colours::THRESHOLD.stroke_width(dpr as u32)))
            .map_err(err)?;
    }
    for t in traces {
        let e = t.envelope;
        let w = dpr.max(1.0) as u32;
        // Each bucket as a vertical segment from its min to its max, joined bucket to bucket.
        let pts: Vec<(f64, f64)> = e
            .t_s
            .iter()
            .zip(e.min_v.iter().zip(&e.max_v))
            .flat_map(|(&x, (&a, &b))| [(x, a * t.scale + t.offset_v), (x, b * t.scale + t.offset_v)])
            .collect();
        chart.draw_series(LineSeries::new(pts, t.colour.stroke_width(w))).map_err(err)?;
    }
    for &(x, colour) in marks {
        if x >= t0 && x <= t1 {
            chart
                .draw_series(std::iter::once(TriangleMarker::new((x, y1 + pad * 0.5), (5.0 * dpr) as i32, colour.filled())))
                .map_err(err)?;
        }
    }
    root.present().map_err(err)?;
    Ok(frame)
}
