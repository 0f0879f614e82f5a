//! A minimal static file server on 127.0.0.1 for the built page. GET only; correct MIME types
//! (the browser compiles WebAssembly by streaming only when served as `application/wasm`).

use std::path::{Path, PathBuf};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::net::TcpListener;

/// The workspace's `dist/` folder.
pub fn dist_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..").join("dist")
}

fn mime(path: &Path) -> &'static str {
    match path.extension().and_then(|e| e.to_str()).unwrap_or("") {
        "html" => "text/html; charset=utf-8",
        "js" => "text/javascript; charset=utf-8",
        "wasm" => "application/wasm",
        "css" => "text/css; charset=utf-8",
        "svg" => "image/svg+xml",
        "json" => "application/json",
        "png" => "image/png",
        "webmanifest" => "application/manifest+json",
        _ => "application/octet-stream",
    }
}

/// Starts serving `root` on a free loopback port; returns the base URL (`http://127.0.0.1:PORT/`).
pub async fn serve(root: PathBuf) -> std::io::Result<String> {
    serve_stoppable(root).await.map(|(base, _)| base)
}

/// As [`serve`], and a handle whose `abort()` stops the server: the port is closed, so every later
/// request is refused as by a machine with no network (the offline test).
pub async fn serve_stoppable(root: PathBuf) -> std::io::Result<(String, tokio::task::AbortHandle)> {
    serve_holding(root, None).await
}

/// As [`serve`], but every file whose name starts with `prefix` is sent only after `delay`: a piece
/// arriving late, as over a slow link (the page's loading lines, `e2e_pieces`).
pub async fn serve_slow(root: PathBuf, prefix: &str, delay: std::time::Duration) -> std::io::Result<String> {
    serve_holding(root, Some((prefix.to_string(), delay))).await.map(|(base, _)| base)
}

async fn serve_holding(root: PathBuf, hold: Option<(String, std::time::Duration)>) -> std::io::Result<(String, tokio::task::AbortHandle)> {
    let listener = TcpListener::bind("127.0.0.1:0").await?;
    let port = listener.local_addr()?.port();
    let accept = tokio::spawn(async move {
        loop {
            let Ok((mut sock, _)) = listener.accept().await else { continue };
            let root = root.clone();
            let hold = hold.clone();
            tokio::spawn(async move {
                let mut buf = vec![0u8; 8192];
                let n = sock.read(&mut buf).await.unwrap_or(0);
                let req = String::from_utf8_lossy(&buf[..n]);
                let path = req.split_whitespace().nth(1).unwrap_or("/");
                let path = path.split(['?', '#']).next().unwrap_or("/");
                let rel = path.trim_start_matches('/');
                let rel = if rel.is_empty() { "index.html" } else { rel };
                let file = root.join(rel);
                let ok = !rel.contains("..");
                if let Some((prefix, delay)) = &hold {
                    if rel.starts_with(prefix.as_str()) {
                        tokio::time::sleep(*delay).await;
                    }
                }
                let response = match (ok, tokio::fs::read(&file).await) {
                    (true, Ok(body)) => {
                        let mut head = format!(
                            "HTTP/1.1 200 OK\r\nContent-Type: {}\r\nContent-Length: {}\r\nCache-Control: no-store\r\nConnection: close\r\n\r\n",
                            mime(&file),
                            body.len()
                        )
                        .into_bytes();
                        head.extend_from_slice(&body);
                        head
                    }
                    _ => b"HTTP/1.1 404 Not Found\r\nContent-Length: 9\r\nConnection: close\r\n\r\nnot found".to_vec(),
                };
                sock.write_all(&response).await.ok();
                sock.shutdown().await.ok();
            });
        }
    });
    Ok((format!("http://127.0.0.1:{port}/"), accept.abort_handle()))
}
