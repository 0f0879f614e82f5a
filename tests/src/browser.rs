//! Headless Chromium through chromedriver, and helpers to read and type into the page.

use fantoccini::{Client, ClientBuilder, Locator};
use std::process::Stdio;
use std::time::Duration;
use tokio::process::{Child, Command};

/// A running chromedriver, the page's server, and one browser session. Dropping it ends chromedriver.
pub struct Session {
    /// The WebDriver client.
    pub client: Client,
    /// Base URL of the served page.
    pub base: String,
    _driver: Child,
    _profile: tempdir::Dir,
}

mod tempdir {
    /// A temporary folder removed on drop.
    pub struct Dir(pub std::path::PathBuf);
    impl Drop for Dir {
        fn drop(&mut self) {
            std::fs::remove_dir_all(&self.0).ok();
        }
    }
}

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
    let mut last_err = String::new();
    for _ in 0..50 {
        match ClientBuilder::rustls().expect("tls").capabilities(caps.clone()).connect(&url).await {
            Ok(client) => {
                let s = Session { client, base, _driver: driver, _profile: tempdir::Dir(profile) };
                s.client.goto(&s.base).await.expect("open the page");
                s.wait_for("#design").await;
                return s;
            }
            Err(e) => {
                last_err = e.to_string();
                tokio::time::sleep(Duration::from_millis(200)).await;
            }
        }
    }
    panic!("could not start a browser session through chromedriver: {last_err}");
}

impl Session {
    /// Waits (up to 20 s) for an element to appear.
    pub async fn wait_for(&self, css: &str) -> fantoccini::elements::Element {
        self.client
            .wait()
            .at_most(Duration::from_secs(20))
            .for_element(Locator::Css(css))
            .await
            .unwrap_or_else(|e| panic!("element {css} did not appear: {e}"))
    }

    /// Replaces a text field's content with `text`, firing input events as a user would.
    pub async fn type_into(&self, css: &str, text: &str) {
        let el = self.wait_for(css).await;
        el.clear().await.expect("clear field");
        el.send_keys(text).await.expect("type");
    }

    /// The `data-value` of an output element, parsed as a number.
    pub async fn number(&self, css: &str) -> f64 {
        let el = self.wait_for(css).await;
        let v = el.attr("data-value").await.expect("read attribute").unwrap_or_default();
        v.parse().unwrap_or(f64::NAN)
    }

    /// Waits until `data-value` of `css` is within `tol` of `expected`; returns the last value read.
    pub async fn wait_number(&self, css: &str, expected: f64, tol: f64) -> f64 {
        let mut v = f64::NAN;
        for _ in 0..100 {
            v = self.number(css).await;
            if (v - expected).abs() <= tol {
                return v;
            }
            tokio::time::sleep(Duration::from_millis(50)).await;
        }
        v
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

    /// Ends the browser session.
    pub async fn close(self) {
        self.client.close().await.ok();
    }
}
