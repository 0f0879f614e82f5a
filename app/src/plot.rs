//! Drawing the series that `core` produces onto canvases with plotters-canvas, sized for the
//! screen's device-pixel ratio so lines stay crisp on high-DPI screens.

use hysteron_core::topology::TransferCurve;
use plotters::coord::ranged1d::Ranged;
use plotters::prelude::*;
use canvas2d::Canvas2d as CanvasBackend;
use web_sys::HtmlCanvasElement;

/// The canvas backend the plots draw through: plotters-canvas for shapes, with text drawn and
/// measured here. plotters measures text by adding a `<span>` to the page and reading its height
/// (a forced layout of the whole page for every tick label), and plotters-canvas sets the
/// context's font for every label (the browser parses it each time); here text is measured with
/// the canvas's own `measureText`, and the font, colour and alignment are set only when they
/// change. Drawing is otherwise identical.
mod canvas2d {
    use plotters::prelude::*;
    use plotters_backend::text_anchor::{HPos, VPos};
    use plotters_backend::{BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingErrorKind, FontStyle, FontTransform};
    use plotters_canvas::CanvasBackend as Shapes;
    use wasm_bindgen::JsCast;
    use web_sys::{CanvasRenderingContext2d, HtmlCanvasElement};

    /// A 2D canvas backend (see the module doc).
    pub struct Canvas2d {
        shapes: Shapes,
        context: CanvasRenderingContext2d,
        /// The font last set on the context (measuring text, which borrows the backend shared, sets it too).
        font: std::cell::RefCell<String>,
        fill: String,
        baseline: &'static str,
        align: &'static str,
    }

    /// An error of the canvas (a message from the browser).
    #[derive(Debug)]
    pub struct CanvasError(String);

    impl std::fmt::Display for CanvasError {
        fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
            f.write_str(&self.0)
        }
    }

    impl std::error::Error for CanvasError {}

    fn cast<E: std::fmt::Debug>(e: E) -> DrawingErrorKind<CanvasError> {
        DrawingErrorKind::DrawingError(CanvasError(format!("{e:?}")))
    }

    fn colour(c: BackendColor) -> String {
        let (r, g, b) = c.rgb;
        format!("rgba({r},{g},{b},{})", c.alpha)
    }

    impl Canvas2d {
        /// The backend for a canvas; `None` when it has no 2D context.
        pub fn with_canvas_object(canvas: HtmlCanvasElement) -> Option<Self> {
            let context: CanvasRenderingContext2d = canvas.get_context("2d").ok()??.dyn_into().ok()?;
            let shapes = Shapes::with_canvas_object(canvas)?;
            // A text direction of its own: the default ("inherit") makes every text drawn or
            // measured read the canvas element's computed style (web-sys binds the property only
            // with a feature of its own).
            let _ = js_sys::Reflect::set(context.as_ref(), &"direction".into(), &"ltr".into());
            // Whatever the context holds from an earlier drawing is set again on first use.
            // The font the context has (from an earlier drawing): when it is the one wanted, it is not set at all.
            let font = std::cell::RefCell::new(context.font());
            Some(Canvas2d { shapes, context, font, fill: String::new(), baseline: "", align: "" })
        }

        /// Sets the font, written as the browser writes it back ("12px sans-serif", "bold 12px
        /// sans-serif"): setting the font a canvas already has is then free, while any other text
        /// makes the browser bring the page's styles up to date first (the font may depend on
        /// them), a whole-page style pass in the middle of an edit.
        fn set_font<S: BackendTextStyle>(&self, style: &S) {
            let font = match style.style() {
                FontStyle::Normal => format!("{}px {}", style.size(), style.family().as_str()),
                other => format!("{} {}px {}", other.as_str(), style.size(), style.family().as_str()),
            };
            let mut current = self.font.borrow_mut();
            if font != *current {
                self.context.set_font(&font);
                *current = font;
            }
        }
    }

    fn map<E: std::error::Error + Send + Sync>(e: DrawingErrorKind<E>) -> DrawingErrorKind<CanvasError> {
        match e {
            DrawingErrorKind::DrawingError(e) => DrawingErrorKind::DrawingError(CanvasError(e.to_string())),
            DrawingErrorKind::FontError(e) => DrawingErrorKind::FontError(e),
        }
    }

    impl DrawingBackend for Canvas2d {
        type ErrorType = CanvasError;

        fn get_size(&self) -> (u32, u32) {
            self.shapes.get_size()
        }

        fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<CanvasError>> {
            Ok(())
        }

        fn present(&mut self) -> Result<(), DrawingErrorKind<CanvasError>> {
            Ok(())
        }

        fn draw_pixel(&mut self, point: BackendCoord, color: BackendColor) -> Result<(), DrawingErrorKind<CanvasError>> {
            self.fill.clear();
            self.shapes.draw_pixel(point, color).map_err(map)
        }

        fn draw_line<S: BackendStyle>(&mut self, from: BackendCoord, to: BackendCoord, style: &S) -> Result<(), DrawingErrorKind<CanvasError>> {
            self.shapes.draw_line(from, to, style).map_err(map)
        }

        fn draw_rect<S: BackendStyle>(&mut self, upper_left: BackendCoord, bottom_right: BackendCoord, style: &S, fill: bool) -> Result<(), DrawingErrorKind<CanvasError>> {
            self.fill.clear();
            self.shapes.draw_rect(upper_left, bottom_right, style, fill).map_err(map)
        }

        fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(&mut self, path: I, style: &S) -> Result<(), DrawingErrorKind<CanvasError>> {
            self.shapes.draw_path(path, style).map_err(map)
        }

        fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(&mut self, vert: I, style: &S) -> Result<(), DrawingErrorKind<CanvasError>> {
            self.fill.clear();
            self.shapes.fill_polygon(vert, style).map_err(map)
        }

        fn draw_circle<S: BackendStyle>(&mut self, center: BackendCoord, radius: u32, style: &S, fill: bool) -> Result<(), DrawingErrorKind<CanvasError>> {
            self.fill.clear();
            self.shapes.draw_circle(center, radius, style, fill).map_err(map)
        }

        fn estimate_text_size<S: BackendTextStyle>(&self, text: &str, style: &S) -> Result<(u32, u32), DrawingErrorKind<CanvasError>> {
            self.set_font(style);
            // measureText through the object itself (web-sys binds it only with its TextMetrics feature).
            let context: &wasm_bindgen::JsValue = self.context.as_ref();
            let measure = js_sys::Reflect::get(context, &"measureText".into()).map_err(cast)?;
            let m = measure.dyn_into::<js_sys::Function>().map_err(cast)?.call1(context, &text.into()).map_err(cast)?;
            let number = |k: &str| js_sys::Reflect::get(&m, &k.into()).ok().and_then(|v| v.as_f64()).unwrap_or(f64::NAN);
            let width = number("width");
            let width = if width.is_finite() { width } else { text.chars().count() as f64 * style.size() * 0.6 };
            let height = number("fontBoundingBoxAscent") + number("fontBoundingBoxDescent");
            let height = if height.is_finite() && height > 0.0 { height } else { style.size() * 1.15 };
            Ok((width.ceil().max(0.0) as u32, height.ceil() as u32))
        }

        fn draw_text<S: BackendTextStyle>(&mut self, text: &str, style: &S, pos: BackendCoord) -> Result<(), DrawingErrorKind<CanvasError>> {
            let color = style.color();
            if color.alpha == 0.0 {
                return Ok(());
            }
            let degree = match style.transform() {
                FontTransform::None => 0.0,
                FontTransform::Rotate90 => 90.0,
                FontTransform::Rotate180 => 180.0,
                FontTransform::Rotate270 => 270.0,
            } / 180.0
                * std::f64::consts::PI;
            let baseline = match style.anchor().v_pos {
                VPos::Top => "top",
                VPos::Center => "middle",
                VPos::Bottom => "bottom",
            };
            let align = match style.anchor().h_pos {
                HPos::Left => "start",
                HPos::Right => "end",
                HPos::Center => "center",
            };
            // Set before a rotation's save(), so restore() keeps them.
            if baseline != self.baseline {
                self.context.set_text_baseline(baseline);
                self.baseline = baseline;
            }
            if align != self.align {
                self.context.set_text_align(align);
                self.align = align;
            }
            let fill = colour(color);
            if fill != self.fill {
                self.context.set_fill_style_str(&fill);
                self.fill = fill;
            }
            self.set_font(style);
            let (mut x, mut y) = (f64::from(pos.0), f64::from(pos.1));
            if degree != 0.0 {
                self.context.save();
                self.context.translate(x, y).map_err(cast)?;
                self.context.rotate(degree).map_err(cast)?;
                x = 0.0;
                y = 0.0;
            }
            let drawn = self.context.fill_text(text, x, y).map_err(cast);
            if degree != 0.0 {
                self.context.restore();
            }
            drawn
        }
    }
}

/// Hysteron's palette for plots. The same colours are named as CSS variables in
/// `static/style.css` (`--hy-teal`, `--hy-madder`, `--hy-slate`, `--hy-sand`, `--hy-grid`): keep the two
/// in step.
pub mod colours {
    use plotters::style::RGBColor;
    /// Deep teal (`--hy-teal`): the rising-input branch and the design's output.
    pub const TEAL: RGBColor = RGBColor(0x00, 0x75, 0x6f);
    /// Madder rose (`--hy-madder`): the falling-input branch and the plain comparator's output.
    pub const MADDER: RGBColor = RGBColor(0xb2, 0x3a, 0x5b);
    /// Slate (`--hy-slate`): the input signal, axes and text.
    pub const SLATE: RGBColor = RGBColor(0x2b, 0x3a, 0x42);
    /// Warm sand grey (`--hy-sand`): threshold lines.
    pub const SAND: RGBColor = RGBColor(0x8c, 0x7e, 0x63);
    /// Light teal: histogram bars.
    pub const TEAL_LIGHT: RGBColor = RGBColor(0x40, 0x98, 0x93);
    /// Grid lines (`--hy-grid`).
    pub const GRID: RGBColor = RGBColor(0xec, 0xe8, 0xde);
    /// Rising-input branch.
    pub const RISING: RGBColor = TEAL;
    /// Falling-input branch.
    pub const FALLING: RGBColor = MADDER;
    /// Threshold markers.
    pub const THRESHOLD: RGBColor = SAND;
    /// Grid and axes text.
    pub const INK: RGBColor = SLATE;
}

/// Typical width of one tick label with its gap, CSS pixels: the number of labels an axis gets is
/// its length divided by this, so labels never run together however narrow the plot.
const TICK_SPACING_X_PX: f64 = 64.0;
/// Typical height of one tick label with its gap on a vertical axis, CSS pixels.
const TICK_SPACING_Y_PX: f64 = 34.0;
/// Font size of plot text, CSS pixels.
const FONT_PX: f64 = 12.0;

/// How many tick labels fit along `length_px` CSS pixels at `spacing_px` each (at least 3, at most 10).
pub fn tick_count(length_px: f64, spacing_px: f64) -> usize {
    ((length_px / spacing_px).floor() as usize).clamp(3, 10)
}

/// A tick label for `v` on an axis spanning `span` with about `n` labels: as many decimals as the
/// label step needs, trailing zeros dropped, never "-0".
pub fn tick_text(v: f64, span: f64, n: usize) -> String {
    let step = (span.abs() / n.max(1) as f64).max(f64::MIN_POSITIVE);
    let decimals = (-(step.log10()).floor() + 1.0).clamp(0.0, 9.0) as usize;
    let mut t = format!("{v:.decimals$}");
    if t.contains('.') {
        t = t.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    if t == "-0" {
        t = "0".into();
    }
    t.replace('-', "\u{2212}")
}

/// The unit a time axis is labelled in for a window ending at `t_max_s`: (divisor, unit text).
fn time_unit(t_max_s: f64) -> (f64, &'static str) {
    let m = t_max_s.abs();
    if m < 1e-3 {
        (1e-6, "µs")
    } else if m < 1.0 {
        (1e-3, "ms")
    } else {
        (1.0, "s")
    }
}

/// The CSS size of a canvas as laid out, and the device-pixel ratio; `None` while it is not shown
/// (in a closed fold or a hidden block), when there is nothing sensible to draw at.
/// The laid-out size is read once per canvas and kept until its `ResizeObserver` reports a change
/// (see [`redraw`]): reading it after an edit changed the page would make the browser lay out the
/// whole page at once, in the middle of the edit, instead of once before it paints.
fn css_size(canvas: &HtmlCanvasElement) -> Option<(f64, f64, f64)> {
    let dpr = web_sys::window().map(|w| w.device_pixel_ratio()).unwrap_or(1.0);
    let dpr = if dpr.is_finite() && dpr > 0.0 { dpr } else { 1.0 };
    let (w, h) = match redraw::known_size(canvas) {
        Some(size) => size,
        None => {
            let size = (canvas.client_width() as f64, canvas.client_height() as f64);
            redraw::keep_size(canvas, size);
            size
        }
    };
    (w >= 1.0 && h >= 1.0).then_some((w, h, dpr))
}

/// Sizes the canvas's backing store to its CSS size × device-pixel ratio; returns the CSS width,
/// height and the ratio, or `None` while the canvas is not shown.
pub fn fit_canvas(canvas: &HtmlCanvasElement) -> Option<(f64, f64, f64)> {
    let (w, h, dpr) = css_size(canvas)?;
    let (bw, bh) = ((w * dpr).round() as u32, (h * dpr).round() as u32);
    if canvas.width() != bw {
        canvas.set_width(bw);
    }
    if canvas.height() != bh {
        canvas.set_height(bh);
    }
    Some((w, h, dpr))
}

/// Redrawing on resize: each drawn canvas keeps its latest drawing as a closure and the frame it
/// produced; one `ResizeObserver` redraws a canvas whenever its laid-out size no longer matches its
/// backing store (a window resize, a fold opened, a hidden block shown).
mod redraw {
    use super::PlotFrame;
    use std::cell::RefCell;
    use std::rc::Rc;
    use wasm_bindgen::prelude::*;
    use web_sys::{HtmlCanvasElement, ResizeObserver};

    type Draw = Rc<dyn Fn(&HtmlCanvasElement) -> Option<PlotFrame>>;

    struct Entry {
        canvas: HtmlCanvasElement,
        draw: Draw,
        frame: Option<PlotFrame>,
        /// Laid-out CSS size as last read, until the observer reports a change (only a shown
        /// canvas's size is kept: a hidden one is read again each time).
        size: Option<(f64, f64)>,
    }

    /// The kept CSS size of a drawn canvas.
    pub fn known_size(canvas: &HtmlCanvasElement) -> Option<(f64, f64)> {
        ENTRIES.with(|e| e.borrow().iter().find(|x| &x.canvas == canvas).and_then(|x| x.size))
    }

    /// Keeps a drawn canvas's CSS size as just read (nothing for a canvas not drawn through [`keep`]).
    pub fn keep_size(canvas: &HtmlCanvasElement, size: (f64, f64)) {
        if size.0 < 1.0 || size.1 < 1.0 {
            return;
        }
        ENTRIES.with(|e| {
            if let Ok(mut e) = e.try_borrow_mut() {
                if let Some(x) = e.iter_mut().find(|x| &x.canvas == canvas) {
                    x.size = Some(size);
                }
            }
        });
    }

    fn forget_size(canvas: Option<&HtmlCanvasElement>) {
        ENTRIES.with(|e| {
            for x in e.borrow_mut().iter_mut().filter(|x| canvas.is_none_or(|c| &x.canvas == c)) {
                x.size = None;
            }
        });
    }

    /// The page's one resize observer and the callback it calls with its entries.
    type Observer = (ResizeObserver, Closure<dyn FnMut(js_sys::Array)>);

    thread_local! {
        static ENTRIES: RefCell<Vec<Entry>> = const { RefCell::new(Vec::new()) };
        static OBSERVER: RefCell<Option<Observer>> = const { RefCell::new(None) };
    }

    fn stale(canvas: &HtmlCanvasElement) -> bool {
        match super::css_size(canvas) {
            Some((w, h, dpr)) => canvas.width() != (w * dpr).round() as u32 || canvas.height() != (h * dpr).round() as u32,
            None => false,
        }
    }

    /// Redraws every kept canvas whose backing store no longer matches its size × pixel ratio.
    fn redraw_stale() {
        forget_size(None);
        let canvases: Vec<HtmlCanvasElement> = ENTRIES.with(|e| e.borrow().iter().map(|x| x.canvas.clone()).collect());
        for c in canvases.iter().filter(|c| stale(c)) {
            redraw(c);
        }
    }

    /// Redraws when the device-pixel ratio changes (browser zoom, a window moved to another
    /// screen), which need not change any element's CSS size: a media query on the present ratio
    /// reports the change once, then a new one is set for the new ratio.
    fn watch_ratio() {
        let Some(w) = web_sys::window() else { return };
        let query = format!("(resolution: {}dppx)", w.device_pixel_ratio());
        let call = |target: &JsValue, name: &str, args: &[JsValue]| -> Option<JsValue> {
            let f = js_sys::Reflect::get(target, &name.into()).ok()?.dyn_into::<js_sys::Function>().ok()?;
            let args: js_sys::Array = args.iter().collect();
            f.apply(target, &args).ok()
        };
        let Some(list) = call(&w, "matchMedia", &[query.into()]) else { return };
        let on_change = Closure::once_into_js(move || {
            redraw_stale();
            watch_ratio();
        });
        let _ = call(&list, "addEventListener", &["change".into(), on_change]);
    }

    thread_local! {
        static LAST_RATIO: std::cell::Cell<f64> = const { std::cell::Cell::new(0.0) };
    }

    /// The media query does not report every change of the ratio (Chromium's device emulation
    /// changes it without an event): the ratio is also read four times a second, and a change
    /// redraws the plots (one property read per tick, no layout unless it changed).
    fn poll_ratio() {
        let Some(w) = web_sys::window() else { return };
        LAST_RATIO.with(|r| r.set(w.device_pixel_ratio()));
        let tick = Closure::<dyn FnMut()>::new(|| {
            let Some(w) = web_sys::window() else { return };
            let now = w.device_pixel_ratio();
            if LAST_RATIO.with(|r| r.replace(now)) != now {
                redraw_stale();
            }
        });
        let _ = w.set_interval_with_callback_and_timeout_and_arguments_0(tick.as_ref().unchecked_ref(), 250);
        tick.forget();
    }

    fn observer() -> Option<ResizeObserver> {
        OBSERVER.with(|o| {
            let mut o = o.borrow_mut();
            if o.is_none() {
                watch_ratio();
                poll_ratio();
                let cb = Closure::<dyn FnMut(js_sys::Array)>::new(|entries: js_sys::Array| {
                    for e in entries.iter() {
                        let Ok(target) = js_sys::Reflect::get(&e, &"target".into()) else { continue };
                        let Ok(canvas) = target.dyn_into::<HtmlCanvasElement>() else { continue };
                        forget_size(Some(&canvas));
                        if stale(&canvas) {
                            redraw(&canvas);
                        }
                    }
                });
                let obs = ResizeObserver::new(cb.as_ref().unchecked_ref()).ok()?;
                // A window resize may reach a drawing (a section redrawing on `resize`) before the
                // observer reports the new sizes: every kept size is read again after one. A
                // capturing listener runs before the page's own listeners of the event.
                let on_resize = Closure::<dyn FnMut()>::new(|| forget_size(None));
                if let Some(w) = web_sys::window() {
                    let _ = w.add_event_listener_with_callback_and_bool("resize", on_resize.as_ref().unchecked_ref(), true);
                }
                on_resize.forget();
                *o = Some((obs, cb));
            }
            o.as_ref().map(|(obs, _)| obs.clone())
        })
    }

    fn redraw(canvas: &HtmlCanvasElement) {
        let draw = ENTRIES.with(|e| e.borrow().iter().find(|x| &x.canvas == canvas).map(|x| x.draw.clone()));
        if let Some(draw) = draw {
            let frame = draw(canvas);
            set_frame(canvas, frame);
        }
    }

    fn set_frame(canvas: &HtmlCanvasElement, frame: Option<PlotFrame>) {
        ENTRIES.with(|e| {
            if let Some(x) = e.borrow_mut().iter_mut().find(|x| &x.canvas == canvas) {
                x.frame = frame;
            }
        });
    }

    /// Draws now and keeps the drawing for later resizes; returns the frame of this drawing.
    pub fn keep(canvas: &HtmlCanvasElement, draw: Draw) -> Option<PlotFrame> {
        let known = ENTRIES.with(|e| {
            let mut e = e.borrow_mut();
            // Canvases that left the page are forgotten.
            e.retain(|x| x.canvas.is_connected());
            match e.iter_mut().find(|x| &x.canvas == canvas) {
                Some(x) => {
                    x.draw = draw.clone();
                    true
                }
                None => {
                    e.push(Entry { canvas: canvas.clone(), draw: draw.clone(), frame: None, size: None });
                    false
                }
            }
        });
        if !known {
            if let Some(obs) = observer() {
                // Watch the size in device pixels, so a change of pixel ratio alone (a window moved
                // to another screen, browser zoom) redraws too; browsers without that box get the
                // plain content box.
                let opts = js_sys::Object::new();
                let _ = js_sys::Reflect::set(&opts, &"box".into(), &"device-pixel-content-box".into());
                let observe = js_sys::Reflect::get(&obs, &"observe".into()).ok().and_then(|f| f.dyn_into::<js_sys::Function>().ok());
                if observe.is_none_or(|f| f.call2(&obs, canvas, &opts).is_err()) {
                    obs.observe(canvas);
                }
            }
        }
        if folded(canvas) {
            // Not shown, yet Chromium gives it a client size: it used to be drawn, after a forced
            // layout (about 10 ms for the folded temperature plot, in a CPU profile of a cold load).
            // A zero-width backing store makes the observer's report, when the fold opens, find the
            // canvas stale, so the latest drawing is made then.
            canvas.set_width(0);
            set_frame(canvas, None);
            return None;
        }
        let frame = draw(canvas);
        set_frame(canvas, frame);
        frame
    }

    /// Whether the canvas lies inside a closed fold (`<details>` without `open`), so it is not
    /// shown. A selector match up the ancestors: no style or layout is computed.
    fn folded(canvas: &HtmlCanvasElement) -> bool {
        canvas.closest("details:not([open])").ok().flatten().is_some()
    }

    /// The frame of the canvas's latest drawing.
    pub fn frame(canvas: &HtmlCanvasElement) -> Option<PlotFrame> {
        ENTRIES.with(|e| e.borrow().iter().find(|x| &x.canvas == canvas).and_then(|x| x.frame))
    }
}

/// The frame of a canvas's latest drawing (it changes when the canvas is redrawn at a new size), for
/// turning a pointer position into data values.
pub fn current_frame(canvas: &HtmlCanvasElement) -> Option<PlotFrame> {
    redraw::frame(canvas)
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

/// A legend strip above a chart: a short line in each colour followed by its name. `scale` is
/// backing pixels per CSS pixel. In line with the chart's plotting area where the strip is wide
/// enough; on a narrow screen from its left edge with the items closer, in a smaller type if they
/// still do not fit (down to 70 %), so no name runs off the canvas.
fn legend<DB: DrawingBackend>(area: &DrawingArea<DB, plotters::coord::Shift>, items: &[(&str, RGBColor)], scale: f64) -> Result<(), String> {
    let width = area.dim_in_pixel().0 as f64;
    let y = (area.dim_in_pixel().1 as f64 / 2.0) as i32;
    let (line, after_line) = (18.0 * scale, 6.0 * scale);
    // The canvas backend underestimates text widths: take a generous average glyph width.
    let text_width = |name: &str, px: f64| {
        let estimate = name.chars().count() as f64 * px * 0.6;
        area.estimate_text_size(name, &("sans-serif", px as u32).into_font().color(&colours::INK)).map_or(estimate, |(w, _)| (w as f64).max(estimate))
    };
    let span = |start: f64, gap: f64, px: f64| {
        start + items.iter().map(|(name, _)| line + after_line + text_width(name, px)).sum::<f64>() + gap * items.len().saturating_sub(1) as f64
    };
    let mut px = FONT_PX * scale;
    let (start, gap) = if span(46.0 * scale, 16.0 * scale, px) <= width { (46.0 * scale, 16.0 * scale) } else { (4.0 * scale, 10.0 * scale) };
    let needed = span(start, gap, px);
    if needed > width {
        px *= (width / needed).max(0.7);
    }
    let font = ("sans-serif", px as u32).into_font().color(&colours::INK);
    let mut x = start;
    for (name, colour) in items {
        let from = x as i32;
        area.draw(&PathElement::new(vec![(from, y), (from + line as i32, y)], colour.stroke_width((3.0 * scale).max(1.0) as u32))).map_err(err)?;
        x += line + after_line;
        area.draw(&Text::new(name.to_string(), (x as i32, y - (px * 0.55) as i32), font.clone())).map_err(err)?;
        x += text_width(name, px) + gap;
    }
    Ok(())
}

/// Draws the hysteresis loop at the canvas's on-screen size × device-pixel ratio: both branches
/// (named in a legend), direction arrows, and the thresholds marked. Redrawn when the canvas
/// changes size; `None` while the canvas is not shown.
pub fn draw_transfer(canvas: &HtmlCanvasElement, curve: &TransferCurve) -> Result<Option<PlotFrame>, String> {
    let curve = curve.clone();
    let error = std::rc::Rc::new(std::cell::RefCell::new(None::<String>));
    let e2 = error.clone();
    let frame = redraw::keep(
        canvas,
        std::rc::Rc::new(move |c: &HtmlCanvasElement| {
            let (w, h, dpr) = fit_canvas(c)?;
            let backend = CanvasBackend::with_canvas_object(c.clone())?;
            match transfer_on(backend.into_drawing_area(), &curve, dpr, (w, h)) {
                Ok(f) => Some(f),
                Err(e) => {
                    *e2.borrow_mut() = Some(e);
                    None
                }
            }
        }),
    );
    let failed = error.borrow_mut().take();
    match failed {
        Some(e) => Err(e),
        None => Ok(frame),
    }
}

/// Draws a chart of its own into `canvas` at its on-screen size × device-pixel ratio, now and again
/// whenever the canvas is resized or shown (a fold opened); `paint` gets the canvas, already sized,
/// and the ratio. Nothing is drawn while the canvas is hidden.
pub fn draw_kept(
    canvas: &HtmlCanvasElement,
    paint: impl Fn(&HtmlCanvasElement, f64) -> Result<(), String> + 'static,
) -> Result<(), String> {
    let error = std::rc::Rc::new(std::cell::RefCell::new(None::<String>));
    let e2 = error.clone();
    redraw::keep(
        canvas,
        std::rc::Rc::new(move |c: &HtmlCanvasElement| {
            let (_, _, dpr) = fit_canvas(c)?;
            match paint(c, dpr) {
                Ok(()) => Some(PlotFrame { dpr, ..PlotFrame::default() }),
                Err(e) => {
                    *e2.borrow_mut() = Some(e);
                    None
                }
            }
        }),
    );
    let failed = error.borrow_mut().take();
    failed.map_or(Ok(()), Err)
}

/// Draws the transfer curve into a canvas of a fixed backing size (for the print sheet, whose
/// canvas has no on-screen size to measure); `scale` multiplies line widths and fonts.
pub fn draw_transfer_fixed(canvas: &HtmlCanvasElement, curve: &TransferCurve, width: u32, height: u32, scale: f64) -> Result<PlotFrame, String> {
    canvas.set_width(width);
    canvas.set_height(height);
    let backend = CanvasBackend::with_canvas_object(canvas.clone()).ok_or("plot: no 2D canvas")?;
    transfer_on(backend.into_drawing_area(), curve, scale, (width as f64 / scale, height as f64 / scale))
}

/// The transfer curve as an SVG document (for the file export), 720 × 400 px.
pub fn transfer_svg(curve: &TransferCurve) -> Result<String, String> {
    let mut out = String::new();
    {
        let backend = plotters::backend::SVGBackend::with_string(&mut out, (720, 400));
        transfer_on(backend.into_drawing_area(), curve, 1.0, (720.0, 400.0))?;
    }
    Ok(out)
}

/// What a chart's axes say: their titles, the spans their tick labels are chosen for, and whether
/// the x axis is labelled (stacked lanes label only the lowest).
struct Axes<'a> {
    x_desc: &'a str,
    y_desc: &'a str,
    /// The x axis's span and the divisor its labels are shown in (1, or a time unit).
    x_span: (f64, f64),
    y_span: f64,
    x_labels: bool,
}

/// The axis style shared by every chart: tick count from the axis length, labels from
/// [`tick_text`], Hysteron's grid colour. `css` is the data area's approximate size in CSS pixels.
fn mesh<DB: DrawingBackend>(
    chart: &mut ChartContext<'_, DB, Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>>,
    axes: Axes<'_>,
    css: (f64, f64),
    scale: f64,
) -> Result<(), String> {
    let Axes { x_desc, y_desc, x_span, y_span, x_labels } = axes;
    let nx = tick_count(css.0, TICK_SPACING_X_PX);
    let ny = tick_count(css.1, TICK_SPACING_Y_PX);
    let (span_x, div_x) = x_span;
    let fx = move |v: &f64| tick_text(v / div_x, span_x / div_x, nx);
    let fy = move |v: &f64| tick_text(*v, y_span, ny);
    let font = ("sans-serif", (FONT_PX * scale) as u32).into_font().color(&colours::INK);
    let mut m = chart.configure_mesh();
    m.x_labels(if x_labels { nx } else { 0 })
        .y_labels(ny)
        .x_label_formatter(&fx)
        .y_label_formatter(&fy)
        .y_desc(y_desc)
        .label_style(font.clone())
        .axis_desc_style(font)
        .bold_line_style(colours::GRID.stroke_width(scale.max(1.0) as u32))
        .light_line_style(TRANSPARENT)
        .axis_style(colours::SAND.stroke_width(scale.max(1.0) as u32));
    if x_labels {
        m.x_desc(x_desc);
    }
    m.draw().map_err(err)
}

fn transfer_on<DB: DrawingBackend>(
    root: DrawingArea<DB, plotters::coord::Shift>,
    curve: &TransferCurve,
    dpr: f64,
    css: (f64, f64),
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
    let py = ((y1 - y0) * 0.16).max(1e-3);
    x0 -= px;
    x1 += px;
    y0 -= py;
    y1 += py;
    let font_px = FONT_PX * dpr;
    let font = ("sans-serif", font_px as u32).into_font().color(&colours::INK);
    let (head, body) = root.split_vertically((24.0 * dpr) as u32);
    legend(&head, &[("rising input → VT+", colours::RISING), ("falling input → VT−", colours::FALLING)], dpr)?;
    let mut chart = ChartBuilder::on(&body)
        .margin_left((6.0 * dpr) as u32)
        .margin_right((14.0 * dpr) as u32)
        .margin_top((4.0 * dpr) as u32)
        .margin_bottom((4.0 * dpr) as u32)
        .x_label_area_size((38.0 * dpr) as u32)
        .y_label_area_size((50.0 * dpr) as u32)
        .build_cartesian_2d(x0..x1, y0..y1)
        .map_err(err)?;
    let area_css = ((css.0 - 70.0).max(40.0), (css.1 - 70.0).max(40.0));
    mesh(&mut chart, Axes { x_desc: "input (V)", y_desc: "output (V)", x_span: (x1 - x0, 1.0), y_span: y1 - y0, x_labels: true }, area_css, dpr)?;
    let frame = frame_of(&chart, (x0, x1), (y0, y1), dpr);
    let stroke = (2.2 * dpr).max(1.0) as u32;
    // Threshold lines, each named at its top; the name of the threshold further right is put on
    // the right of its line so the two names never overlap.
    let (lo_vt, hi_vt) = if curve.vt_lower_v <= curve.vt_upper_v { (curve.vt_lower_v, curve.vt_upper_v) } else { (curve.vt_upper_v, curve.vt_lower_v) };
    for (vt, name) in [(curve.vt_upper_v, "VT+"), (curve.vt_lower_v, "VT−")] {
        chart
            .draw_series(DashedLineSeries::new(
                vec![(vt, y0), (vt, y1)],
                (5.0 * dpr) as u32,
                (4.0 * dpr) as u32,
                colours::THRESHOLD.stroke_width(dpr.max(1.0) as u32),
            ))
            .map_err(err)?;
        let right = vt == hi_vt && hi_vt != lo_vt;
        let label = format!("{name} {}", tick_text(vt, (x1 - x0) / 100.0, 1));
        let style = font.clone().pos(plotters::style::text_anchor::Pos::new(
            if right { plotters::style::text_anchor::HPos::Left } else { plotters::style::text_anchor::HPos::Right },
            plotters::style::text_anchor::VPos::Top,
        ));
        let nudge = (x1 - x0) * 0.008 * if right { 1.0 } else { -1.0 };
        chart.draw_series(std::iter::once(Text::new(format!("{label} V"), (vt + nudge, y1 - py * 0.15), style))).map_err(err)?;
    }
    for (branch, colour) in [(&curve.rising, colours::RISING), (&curve.falling, colours::FALLING)] {
        let pts: Vec<(f64, f64)> = branch.iter().map(|p| (p.vin_v, p.vout_v)).collect();
        chart.draw_series(LineSeries::new(pts.clone(), colour.stroke_width(stroke))).map_err(err)?;
        // Direction marks: a filled triangle on the branch's first horizontal run (the part of the
        // loop only this branch traces), pointing the way the input moves.
        if let Some(w) = pts.windows(2).find(|w| (w[0].1 - w[1].1).abs() < 1e-12 && (w[1].0 - w[0].0).abs() > 1e-12) {
            let ((xa, ya), (xb, _)) = (w[0], w[1]);
            let (lo, hi) = (xa.min(xb), xa.max(xb));
            let xm = lo + (hi - lo) * 0.5;
            let dir = (xb - xa).signum();
            let dx = (x1 - x0) * 0.018 * dir;
            let dy = (y1 - y0) * 0.035;
            chart
                .draw_series(std::iter::once(Polygon::new(vec![(xm + dx, ya), (xm - dx, ya + dy), (xm - dx, ya - dy)], colour.filled())))
                .map_err(err)?;
        }
    }
    root.present().map_err(err)?;
    Ok(frame)
}

/// Draws a histogram of Monte Carlo results with the spec window's limits marked, at the canvas's
/// on-screen size × device-pixel ratio (redrawn when it changes size; nothing while not shown).
pub fn draw_histogram(
    canvas: &HtmlCanvasElement,
    hist: &hysteron_core::tolerance::monte_carlo::Histogram,
    x_label: &str,
    spec_min: Option<f64>,
    spec_max: Option<f64>,
) -> Result<Option<PlotFrame>, String> {
    let n = hist.counts.len();
    if n == 0 || hist.upper_v.partial_cmp(&hist.lower_v) != Some(std::cmp::Ordering::Greater) {
        return Err("plot: empty histogram".into());
    }
    let hist = hist.clone();
    let x_label = x_label.to_string();
    Ok(redraw::keep(
        canvas,
        std::rc::Rc::new(move |c: &HtmlCanvasElement| {
            let (w, h, dpr) = fit_canvas(c)?;
            let backend = CanvasBackend::with_canvas_object(c.clone())?;
            histogram_on(backend.into_drawing_area(), &hist, &x_label, spec_min, spec_max, dpr, (w, h)).ok()
        }),
    ))
}

fn histogram_on<DB: DrawingBackend>(
    root: DrawingArea<DB, plotters::coord::Shift>,
    hist: &hysteron_core::tolerance::monte_carlo::Histogram,
    x_label: &str,
    spec_min: Option<f64>,
    spec_max: Option<f64>,
    dpr: f64,
    css: (f64, f64),
) -> Result<PlotFrame, String> {
    root.fill(&WHITE).map_err(err)?;
    let mut x0 = hist.lower_v;
    let mut x1 = hist.upper_v;
    for v in [spec_min, spec_max].into_iter().flatten() {
        x0 = x0.min(v);
        x1 = x1.max(v);
    }
    let pad = (x1 - x0) * 0.05;
    let ymax = hist.counts.iter().copied().max().unwrap_or(1).max(1) as f64 * 1.1;
    let body = if spec_min.is_some() || spec_max.is_some() {
        let (head, body) = root.split_vertically((22.0 * dpr) as u32);
        legend(&head, &[("trials", colours::TEAL_LIGHT), ("spec limit", colours::FALLING)], dpr)?;
        body
    } else {
        root.clone()
    };
    let mut chart = ChartBuilder::on(&body)
        .margin_left((6.0 * dpr) as u32)
        .margin_right((14.0 * dpr) as u32)
        .margin_top((8.0 * dpr) as u32)
        .x_label_area_size((36.0 * dpr) as u32)
        .y_label_area_size((50.0 * dpr) as u32)
        .build_cartesian_2d((x0 - pad)..(x1 + pad), 0.0..ymax)
        .map_err(err)?;
    let area_css = ((css.0 - 70.0).max(40.0), (css.1 - 60.0).max(40.0));
    mesh(&mut chart, Axes { x_desc: x_label, y_desc: "trials", x_span: (x1 - x0 + 2.0 * pad, 1.0), y_span: ymax, x_labels: true }, area_css, dpr)?;
    let frame = frame_of(&chart, (x0 - pad, x1 + pad), (0.0, ymax), dpr);
    chart
        .draw_series(hist.counts.iter().enumerate().map(|(i, &c)| {
            let a = hist.lower_v + i as f64 * hist.bin_width_v;
            Rectangle::new([(a, 0.0), (a + hist.bin_width_v, c as f64)], colours::TEAL_LIGHT.filled())
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

/// One trace of the time-domain view: a min/max envelope over the visible window, with its name
/// for the legend.
pub struct Trace<'a> {
    /// Envelope to draw.
    pub envelope: &'a hysteron_core::signal::plot::Envelope,
    /// Colour.
    pub colour: RGBColor,
    /// Name shown in the legend and beside its lane.
    pub label: &'a str,
}

struct OwnedTrace {
    envelope: hysteron_core::signal::plot::Envelope,
    colour: RGBColor,
    label: String,
}

/// Draws the time-domain view at the canvas's on-screen size × device-pixel ratio: the input on
/// a volts axis with the thresholds as lines and the given edge times as marks, and each output
/// below it in a lane of its own with its own volts axis, all sharing the time axis (labelled in
/// s, ms or µs). `t0..t1` is the visible window in seconds. The returned frame is the input's
/// chart. Redrawn when the canvas changes size; `None` while it is not shown.
pub fn draw_time(
    canvas: &HtmlCanvasElement,
    t0: f64,
    t1: f64,
    input: Trace<'_>,
    outputs: &[Trace<'_>],
    thresholds: (f64, f64),
    marks: &[(f64, RGBColor)],
) -> Result<Option<PlotFrame>, String> {
    if t0.is_nan() || t1.is_nan() || t1 <= t0 || input.envelope.min_v.is_empty() {
        return Err("plot: nothing to draw".into());
    }
    let own = |t: &Trace<'_>| OwnedTrace { envelope: t.envelope.clone(), colour: t.colour, label: t.label.to_string() };
    let input = own(&input);
    let outputs: Vec<OwnedTrace> = outputs.iter().map(own).collect();
    let marks = marks.to_vec();
    Ok(redraw::keep(
        canvas,
        std::rc::Rc::new(move |c: &HtmlCanvasElement| {
            let (w, h, dpr) = fit_canvas(c)?;
            let backend = CanvasBackend::with_canvas_object(c.clone())?;
            time_on(backend.into_drawing_area(), t0, t1, &input, &outputs, thresholds, &marks, dpr, (w, h)).ok()
        }),
    ))
}

fn envelope_points(e: &hysteron_core::signal::plot::Envelope) -> Vec<(f64, f64)> {
    // Each bucket as a vertical segment from its min to its max, joined bucket to bucket.
    e.t_s.iter().zip(e.min_v.iter().zip(&e.max_v)).flat_map(|(&x, (&a, &b))| [(x, a), (x, b)]).collect()
}

fn range_of(e: &hysteron_core::signal::plot::Envelope) -> (f64, f64) {
    e.min_v.iter().zip(&e.max_v).fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), (x, y)| (a.min(*x), b.max(*y)))
}

#[allow(clippy::too_many_arguments)]
fn time_on<DB: DrawingBackend>(
    root: DrawingArea<DB, plotters::coord::Shift>,
    t0: f64,
    t1: f64,
    input: &OwnedTrace,
    outputs: &[OwnedTrace],
    thresholds: (f64, f64),
    marks: &[(f64, RGBColor)],
    dpr: f64,
    css: (f64, f64),
) -> Result<PlotFrame, String> {
    root.fill(&WHITE).map_err(err)?;
    let (mut y0, mut y1) = range_of(&input.envelope);
    y0 = y0.min(thresholds.1).min(thresholds.0);
    y1 = y1.max(thresholds.0).max(thresholds.1);
    if !(y0.is_finite() && y1.is_finite()) {
        return Err("plot: nothing to draw".into());
    }
    let pad = ((y1 - y0) * 0.1).max(1e-3);
    let (div, unit) = time_unit(t0.abs().max(t1.abs()));
    let time_desc = format!("time ({unit})");
    let mut items: Vec<(&str, RGBColor)> = vec![(input.label.as_str(), input.colour), ("VT+ / VT−", colours::THRESHOLD)];
    items.extend(outputs.iter().map(|o| (o.label.as_str(), o.colour)));
    let (head, body) = root.split_vertically((24.0 * dpr) as u32);
    legend(&head, &items, dpr)?;
    // The input takes about 55 % of the height; the outputs share the rest, one lane each, and the
    // lowest lane also carries the time axis.
    let body_h = body.dim_in_pixel().1 as f64;
    let axis_h = 40.0 * dpr;
    let lane_h = if outputs.is_empty() { 0.0 } else { ((body_h - axis_h) * 0.45 / outputs.len() as f64).max(30.0 * dpr) };
    let input_h = (body_h - lane_h * outputs.len() as f64 - if outputs.is_empty() { 0.0 } else { axis_h }).max(40.0 * dpr);
    let mut splits = vec![input_h as i32];
    for i in 1..outputs.len() {
        splits.push((input_h + lane_h * i as f64) as i32);
    }
    let areas = body.split_by_breakpoints(Vec::<i32>::new(), splits);
    let label_w = (50.0 * dpr) as u32;
    let x_css = (css.0 - 70.0).max(40.0);
    let mut frame = None;
    for (i, area) in areas.iter().enumerate() {
        let is_input = i == 0;
        let last = i + 1 == areas.len();
        let (lo, hi, trace) = if is_input {
            (y0 - pad, y1 + pad, input)
        } else {
            let o = &outputs[i - 1];
            let (a, b) = range_of(&o.envelope);
            let (a, b) = if a.is_finite() && b.is_finite() { (a, b) } else { (0.0, 1.0) };
            let p = ((b - a) * 0.2).max(0.05);
            (a - p, b + p, o)
        };
        let mut chart = ChartBuilder::on(area)
            .margin_left((6.0 * dpr) as u32)
            .margin_right((14.0 * dpr) as u32)
            .margin_top((4.0 * dpr) as u32)
            .x_label_area_size(if last { axis_h as u32 } else { 0 })
            .y_label_area_size(label_w)
            .build_cartesian_2d(t0..t1, lo..hi)
            .map_err(err)?;
        let h_css = area.dim_in_pixel().1 as f64 / dpr;
        let ny_css = if is_input { h_css } else { h_css.min(TICK_SPACING_Y_PX * 2.0) };
        let axes = Axes { x_desc: &time_desc, y_desc: if is_input { "input (V)" } else { "V" }, x_span: (t1 - t0, div), y_span: hi - lo, x_labels: last };
        mesh(&mut chart, axes, (x_css, ny_css), dpr)?;
        if is_input {
            frame = Some(frame_of(&chart, (t0, t1), (lo, hi), dpr));
            for v in [thresholds.0, thresholds.1] {
                chart
                    .draw_series(DashedLineSeries::new(vec![(t0, v), (t1, v)], (5.0 * dpr) as u32, (4.0 * dpr) as u32, colours::THRESHOLD.stroke_width(dpr.max(1.0) as u32)))
                    .map_err(err)?;
            }
        }
        chart.draw_series(LineSeries::new(envelope_points(&trace.envelope), trace.colour.stroke_width((1.4 * dpr).max(1.0) as u32))).map_err(err)?;
        if is_input {
            for &(x, colour) in marks {
                if x >= t0 && x <= t1 {
                    chart
                        .draw_series(std::iter::once(TriangleMarker::new((x, hi - pad * 0.35), (4.0 * dpr) as i32, colour.filled())))
                        .map_err(err)?;
                }
            }
        } else {
            // The lane's name at its top left, in its colour.
            let style = ("sans-serif", (FONT_PX * dpr) as u32).into_font().color(&trace.colour);
            chart
                .draw_series(std::iter::once(Text::new(trace.label.clone(), (t0 + (t1 - t0) * 0.01, hi), style)))
                .map_err(err)?;
        }
    }
    root.present().map_err(err)?;
    frame.ok_or_else(|| "plot: nothing to draw".into())
}
