//! Headless Chromium through chromedriver, and helpers to read and type into the page.
//!
//! Tests never sleep for a fixed time: every wait is for a condition (an element present, a number or
//! text reaching a value, a JavaScript predicate true, the open design stored with a value) with the
//! timeout [`WAIT`] and a failure message that names what was awaited and what was seen last. The one
//! deliberate delay is [`KEY_DELAY`] between the key events [`Session::type_into`] sends, because a
//! person types one key at a time.

use fantoccini::{Client, ClientBuilder, Locator};
use std::future::Future;
use std::process::Stdio;
use std::time::{Duration, Instant};
use tokio::process::{Child, Command};

/// A running chromedriver, the page's server, and one browser session. Dropping it ends chromedriver.
pub struct Session {
    /// The WebDriver client.
    pub client: Client,
    /// Base URL of the served page.
    pub base: String,
    _driver: Child,
    _profile: profile::Profile,
}

mod profile {
    /// A browser's own profile folder. When dropped (the session closed, or the test panicked
    /// before closing it), any browser still running on it is stopped, then the folder is removed:
    /// chromedriver is killed with its session, which leaves its Chromium running and taking a core
    /// from every later test.
    pub struct Profile(pub std::path::PathBuf);
    impl Drop for Profile {
        fn drop(&mut self) {
            let _ = std::process::Command::new("pkill")
                .args(["-KILL", "-f"])
                // The folder's whole name: a session on port 3963 must not stop the one on 39637.
                .arg(format!("user-data-dir={}( |$)", self.0.display()))
                .stdout(std::process::Stdio::null())
                .stderr(std::process::Stdio::null())
                .status();
            std::fs::remove_dir_all(&self.0).ok();
        }
    }
}

/// How long any awaited condition may take before the test fails.
pub const WAIT: Duration = Duration::from_secs(20);

/// The pause between two key events in [`Session::type_into`]: a quick typist (about 100 words a
/// minute is 8 characters a second; common practice). Keys of one field typed this fast still merge
/// into one undo step (`History::MERGE_MS`, 800 ms).
pub const KEY_DELAY: Duration = Duration::from_millis(60);

/// How often a condition is checked again while waiting.
const POLL: Duration = Duration::from_millis(25);

/// Checks `probe` until it gives `Ok`, for at most `timeout`; panics naming `what` was awaited and
/// the last state `probe` reported (its `Err`).
pub async fn wait_until<T, F, Fut>(what: &str, timeout: Duration, mut probe: F) -> T
where
    F: FnMut() -> Fut,
    Fut: Future<Output = Result<T, String>>,
{
    let start = Instant::now();
    loop {
        match probe().await {
            Ok(v) => return v,
            Err(last) if start.elapsed() >= timeout => {
                panic!("timed out after {:.1} s waiting for {what}; last seen: {last}", timeout.as_secs_f64())
            }
            Err(_) => tokio::time::sleep(POLL).await,
        }
    }
}

/// JavaScript truthiness of a script's result.
fn truthy(v: &serde_json::Value) -> bool {
    match v {
        serde_json::Value::Null => false,
        serde_json::Value::Bool(b) => *b,
        serde_json::Value::Number(n) => n.as_f64().is_some_and(|x| x != 0.0),
        serde_json::Value::String(s) => !s.is_empty(),
        _ => true,
    }
}

/// The script body that returns the open design's record as stored in local storage (or null).
const OPEN_RECORD_JS: &str = "const li = document.querySelector('#design-list li.open'); \
    const raw = li && localStorage.getItem('hysteron/design/' + li.dataset.id); \
    const r = raw ? JSON.parse(raw).record : null;";

fn free_port() -> u16 {
    std::net::TcpListener::bind("127.0.0.1:0").and_then(|l| l.local_addr()).map(|a| a.port()).unwrap_or(9515)
}

/// Starts the server for `dist/`, chromedriver and a fresh headless Chromium profile, and opens the page.
/// Panics with a clear message when the page was not built or the browser is missing: run `cargo xtask test`.
pub async fn start() -> Session {
    let dist = crate::server::dist_dir();
    assert!(
        dist.join("index.html").exists(),
        "the page is not built ({}/index.html missing): run `cargo xtask test`, which builds it first",
        dist.display()
    );
    let base = crate::server::serve(dist).await.expect("start the static server");
    start_at(base).await
}

/// As [`start`], for a page already served at `base` (a test that controls its own server).
pub async fn start_at(base: String) -> Session {
    let s = open_at(base).await;
    s.wait_for("#design").await;
    s
}

/// As [`start_at`], but waits only for the page's first module (its header), not for the editor:
/// for a test of what shows before the editor arrives, or when it cannot.
pub async fn open_at(base: String) -> Session {
    let port = free_port();
    let driver = Command::new("chromedriver")
        .arg(format!("--port={port}"))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .kill_on_drop(true)
        .spawn()
        .expect("start chromedriver (Debian package chromium-driver; `cargo xtask test` installs it)");
    let profile = std::env::temp_dir().join(format!("hysteron-e2e-{}-{port}", std::process::id()));
    std::fs::create_dir_all(&profile).ok();
    let caps = serde_json::json!({
        "goog:chromeOptions": {
            "binary": "/usr/bin/chromium",
            "args": [
                "--headless=new", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                "--disable-background-networking", "--disable-component-update", "--disable-sync",
                "--disable-extensions", "--no-first-run", "--window-size=1280,900",
                format!("--user-data-dir={}", profile.display())
            ]
        }
    });
    let caps: serde_json::Map<String, serde_json::Value> = caps.as_object().cloned().unwrap_or_default();
    let url = format!("http://127.0.0.1:{port}");
    // chromedriver takes a moment to listen on its port: wait until a session can be made.
    let (caps, url) = (&caps, &url);
    let client = wait_until("a browser session through chromedriver", WAIT, move || async move {
        ClientBuilder::rustls().expect("tls").capabilities(caps.clone()).connect(url).await.map_err(|e| e.to_string())
    })
    .await;
    let s = Session { client, base, _driver: driver, _profile: profile::Profile(profile) };
    s.client.goto(&s.base).await.expect("open the page");
    s.wait_for("header.top").await;
    s
}

/// chromedriver's extension command that runs a Chrome DevTools command (`goog/cdp/execute`).
#[derive(Debug)]
struct DevTools(serde_json::Value);

impl fantoccini::wd::WebDriverCompatibleCommand for DevTools {
    fn endpoint(&self, base: &url::Url, session: Option<&str>) -> Result<url::Url, url::ParseError> {
        base.join(&format!("session/{}/goog/cdp/execute", session.unwrap_or_default()))
    }
    fn method_and_body(&self, _: &url::Url) -> (http::Method, Option<String>) {
        (http::Method::POST, Some(self.0.to_string()))
    }
}

impl Session {
    /// Runs the Chrome DevTools command `cmd` with `params` through chromedriver (a screen size,
    /// a screenshot, a script before every load…) and returns its result; panics when it fails.
    pub async fn devtools(&self, cmd: &str, params: serde_json::Value) -> serde_json::Value {
        self.client
            .issue_cmd(DevTools(serde_json::json!({"cmd": cmd, "params": params})))
            .await
            .unwrap_or_else(|e| panic!("DevTools command {cmd}: {e}"))
    }

    /// Waits (up to 20 s) for an element to appear. Long studies are folded (`<details>`): an element
    /// inside a closed fold has its folds opened first, as a user opens a study to reach its fields.
    pub async fn wait_for(&self, css: &str) -> fantoccini::elements::Element {
        let el = self
            .client
            .wait()
            .at_most(Duration::from_secs(20))
            .for_element(Locator::Css(css))
            .await
            .unwrap_or_else(|e| panic!("element {css} did not appear: {e}"));
        let open_folds = "for (let d = arguments[0].closest('details:not([open])'); d; d = d.closest('details:not([open])')) d.open = true;";
        if let Ok(arg) = serde_json::to_value(&el) {
            self.client.execute(open_folds, vec![arg]).await.ok();
        }
        el
    }

    /// Replaces a text field's content with `text` as a user would: the field is cleared, then each
    /// character is sent as its own real key event (through WebDriver, not a script setting `value`),
    /// [`KEY_DELAY`] apart, so the page sees one `input` event per key.
    pub async fn type_into(&self, css: &str, text: &str) {
        let el = self.wait_for(css).await;
        el.clear().await.expect("clear field");
        for (i, c) in text.chars().enumerate() {
            if i > 0 {
                tokio::time::sleep(KEY_DELAY).await;
            }
            el.send_keys(&c.to_string()).await.unwrap_or_else(|e| panic!("type {c:?} into {css}: {e}"));
        }
        // Every key arrived: the field holds the text, or the page re-showed the same number in its
        // own notation (e.g. "1M" as "1 M").
        let value = el.prop("value").await.ok().flatten().unwrap_or_default();
        let same_number = |a: &str, b: &str| {
            use hysteron_core::notation::parse_value;
            matches!((parse_value(a), parse_value(b)), (Ok(x), Ok(y)) if (x - y).abs() <= 1e-12 * x.abs().max(y.abs()))
        };
        assert!(value == text || same_number(&value, text), "{css} holds {value:?} after typing {text:?}");
    }

    /// The `data-value` of an output element, parsed as a number.
    pub async fn number(&self, css: &str) -> f64 {
        let el = self.wait_for(css).await;
        let v = el.attr("data-value").await.expect("read attribute").unwrap_or_default();
        v.parse().unwrap_or(f64::NAN)
    }

    /// Waits until `data-value` of `css` is within `tol` of `expected`; returns the value read.
    pub async fn wait_number(&self, css: &str, expected: f64, tol: f64) -> f64 {
        wait_until(&format!("{css} to show {expected} ± {tol}"), WAIT, move || async move {
            let v = self.number(css).await;
            if (v - expected).abs() <= tol { Ok(v) } else { Err(v.to_string()) }
        })
        .await
    }

    /// Waits until `data-value` of `css` is a number other than `from` (the page recomputed).
    pub async fn wait_number_change(&self, css: &str, from: f64) -> f64 {
        wait_until(&format!("{css} to change from {from}"), WAIT, move || async move {
            let v = self.number(css).await;
            if v.is_finite() && v != from { Ok(v) } else { Err(v.to_string()) }
        })
        .await
    }

    /// Waits until the text of `css` satisfies `test` (described by `what`); returns the text.
    pub async fn wait_text(&self, css: &str, what: &str, test: impl Fn(&str) -> bool) -> String {
        let test = &test;
        wait_until(&format!("{css} to read {what}"), WAIT, move || async move {
            let t = self.text(css).await;
            if test(&t) { Ok(t) } else { Err(format!("{t:?}")) }
        })
        .await
    }

    /// Waits until the script body `predicate` (JavaScript ending in `return …`) gives a truthy value;
    /// returns that value. `what` says what is awaited, for the failure message.
    pub async fn wait_js(&self, what: &str, predicate: &str) -> serde_json::Value {
        wait_until(what, WAIT, move || async move {
            let v = self.js(predicate).await;
            if truthy(&v) { Ok(v) } else { Err(v.to_string()) }
        })
        .await
    }

    /// Waits until the open design, as stored in local storage, satisfies `predicate`: a JavaScript
    /// expression over the stored record `r` (e.g. `r.tolerance.monte_carlo.trials === 20000`).
    /// Edits are saved as they are applied, so this is "the page has taken the edit".
    pub async fn wait_stored(&self, predicate: &str) {
        let script = format!("{OPEN_RECORD_JS} if (!r) return null; try {{ return !!({predicate}); }} catch (e) {{ return String(e); }}");
        let script = &script;
        wait_until(&format!("the open design to be stored with {predicate}"), WAIT, move || async move {
            match self.js(script).await {
                serde_json::Value::Bool(true) => Ok(()),
                other => Err(other.to_string()),
            }
        })
        .await
    }

    /// Adds a design from a starter (`demo:<key>` or a template value) and waits until it is the open
    /// design, new in the list, with its results shown.
    pub async fn add_starter(&self, value: &str) {
        let before = self.js("return [...document.querySelectorAll('#design-list li')].map(li => li.dataset.id)").await;
        self.wait_for("#starter-choice").await.select_by_value(value).await.unwrap_or_else(|e| panic!("choose {value}: {e}"));
        self.wait_for("#add-starter").await.click().await.expect("add the starter");
        let script = format!(
            "const before = {before}; const li = document.querySelector('#design-list li.open'); \
             const out = document.querySelector('#vt-upper'); \
             return !!li && !before.includes(li.dataset.id) && !!out && out.dataset.value !== '';"
        );
        self.wait_js(&format!("the starter {value} to open with its results"), &script).await;
    }

    /// The visible text of an element.
    pub async fn text(&self, css: &str) -> String {
        self.wait_for(css).await.text().await.unwrap_or_default()
    }

    /// Runs JavaScript in the page and returns its JSON result.
    pub async fn js(&self, script: &str) -> serde_json::Value {
        self.client.execute(script, vec![]).await.unwrap_or_else(|e| panic!("script failed: {e}\n{script}"))
    }

    /// Reloads the page and waits for it to mount again.
    pub async fn reload(&self) {
        self.client.refresh().await.expect("reload");
        self.wait_for("#design").await;
    }

    /// Makes a kept study result look as if it was stored before results named their normal
    /// sampler: deletes `normal_sampler` from `studies.<study>.result` of the design stored under
    /// the key `key_js` (a JavaScript expression), reloads, and returns the note the page then
    /// shows in `note_css`. Panics when the stored result does not name its sampler.
    pub async fn forget_sampler_and_reload(&self, key_js: &str, study: &str, note_css: &str) -> String {
        let stripped = self
            .js(&format!(
                "const k = {key_js}; const e = JSON.parse(localStorage.getItem(k)); \
                 const st = e.studies && e.studies['{study}']; if (!st || st.result.normal_sampler === undefined) return false; \
                 delete st.result.normal_sampler; localStorage.setItem(k, JSON.stringify(e)); return true;"
            ))
            .await;
        assert_eq!(stripped.as_bool(), Some(true), "the kept {study} result does not name its sampler in storage");
        self.reload().await;
        self.wait_text(note_css, "the note on a result drawn by an earlier method", |t| !t.is_empty()).await
    }

    /// The browser's profile folder (it names the browser's processes: `--user-data-dir=`).
    pub fn profile_dir(&self) -> &std::path::Path {
        &self._profile.0
    }

    /// Ends the browser session.
    pub async fn close(self) {
        self.client.close().await.ok();
    }
}
