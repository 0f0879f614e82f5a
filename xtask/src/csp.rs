//! Writes the page's Content-Security-Policy into the built index.html (a Trunk post-build hook).
//!
//! The policy allows only the page's own files, its WebAssembly (`'wasm-unsafe-eval'`), and the page's
//! inline scripts (Trunk's module loader, the service worker's registration) by their SHA-256 hashes
//! (CSP Level 3, `'sha256-…'`). Images may be `data:`/`blob:` URLs (the schematic and plot exports);
//! web workers (the compute worker's loader, the service worker) and the web app manifest only from
//! the page's own files (`worker-src 'self'`, `manifest-src 'self'`); nothing else is allowed.

use std::path::PathBuf;

/// Reads `$TRUNK_STAGING_DIR/index.html`, adds the CSP meta tag, writes it back.
pub fn write_policy() -> Result<(), String> {
    let dir = std::env::var("TRUNK_STAGING_DIR").map_err(|_| "csp: run as a Trunk post_build hook (TRUNK_STAGING_DIR unset)".to_string())?;
    let path = PathBuf::from(dir).join("index.html");
    let html = std::fs::read_to_string(&path).map_err(|e| format!("csp: cannot read {}: {e}", path.display()))?;
    let out = with_policy(&html)?;
    std::fs::write(&path, out).map_err(|e| format!("csp: cannot write {}: {e}", path.display()))?;
    println!("[xtask] csp: policy written into {}", path.display());
    Ok(())
}

/// The html with the policy meta tag inserted right after `<head>`.
pub fn with_policy(html: &str) -> Result<String, String> {
    let mut hashes = Vec::new();
    let mut rest = html;
    while let Some(i) = rest.find("<script") {
        let after = &rest[i..];
        let open_end = after.find('>').ok_or("csp: unterminated script tag")? + 1;
        let tag = &after[..open_end];
        let close = after.find("</script>").ok_or("csp: unterminated script")?;
        if !tag.contains("src=") {
            hashes.push(format!("'sha256-{}'", base64(&sha256(&after.as_bytes()[open_end..close]))));
        }
        rest = &after[close + 9..];
    }
    let policy = format!(
        "default-src 'self'; script-src 'self' 'wasm-unsafe-eval' {}; style-src 'self'; worker-src 'self'; manifest-src 'self'; img-src 'self' data: blob:; connect-src 'self'; object-src 'none'; base-uri 'none'; form-action 'none'",
        hashes.join(" ")
    );
    let head = html.find("<head>").ok_or("csp: no <head> in index.html")? + 6;
    Ok(format!(
        "{}\n  <meta http-equiv=\"Content-Security-Policy\" content=\"{}\">{}",
        &html[..head],
        policy,
        &html[head..]
    ))
}

/// SHA-256 (FIPS 180-4).
pub fn sha256(data: &[u8]) -> [u8; 32] {
    const K: [u32; 64] = [
        0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5, 0xd807aa98, 0x12835b01,
        0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174, 0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc,
        0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da, 0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147,
        0x06ca6351, 0x14292967, 0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85,
        0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070, 0x19a4c116, 0x1e376c08,
        0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3, 0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208,
        0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2,
    ];
    let mut h: [u32; 8] = [0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a, 0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19];
    let mut msg = data.to_vec();
    let bits = (data.len() as u64).wrapping_mul(8);
    msg.push(0x80);
    while msg.len() % 64 != 56 {
        msg.push(0);
    }
    msg.extend_from_slice(&bits.to_be_bytes());
    for block in msg.chunks(64) {
        let mut w = [0u32; 64];
        for (i, c) in block.chunks(4).enumerate() {
            w[i] = u32::from_be_bytes([c[0], c[1], c[2], c[3]]);
        }
        for i in 16..64 {
            let s0 = w[i - 15].rotate_right(7) ^ w[i - 15].rotate_right(18) ^ (w[i - 15] >> 3);
            let s1 = w[i - 2].rotate_right(17) ^ w[i - 2].rotate_right(19) ^ (w[i - 2] >> 10);
            w[i] = w[i - 16].wrapping_add(s0).wrapping_add(w[i - 7]).wrapping_add(s1);
        }
        let mut v = h;
        for i in 0..64 {
            let s1 = v[4].rotate_right(6) ^ v[4].rotate_right(11) ^ v[4].rotate_right(25);
            let ch = (v[4] & v[5]) ^ (!v[4] & v[6]);
            let t1 = v[7].wrapping_add(s1).wrapping_add(ch).wrapping_add(K[i]).wrapping_add(w[i]);
            let s0 = v[0].rotate_right(2) ^ v[0].rotate_right(13) ^ v[0].rotate_right(22);
            let maj = (v[0] & v[1]) ^ (v[0] & v[2]) ^ (v[1] & v[2]);
            let t2 = s0.wrapping_add(maj);
            v = [t1.wrapping_add(t2), v[0], v[1], v[2], v[3].wrapping_add(t1), v[4], v[5], v[6]];
        }
        for (a, b) in h.iter_mut().zip(v) {
            *a = a.wrapping_add(b);
        }
    }
    let mut out = [0u8; 32];
    for (i, x) in h.iter().enumerate() {
        out[i * 4..i * 4 + 4].copy_from_slice(&x.to_be_bytes());
    }
    out
}

/// Standard base64 with padding (RFC 4648 §4).
pub fn base64(data: &[u8]) -> String {
    const A: &[u8; 64] = b"ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    let mut s = String::new();
    for c in data.chunks(3) {
        let n = (c[0] as u32) << 16 | (*c.get(1).unwrap_or(&0) as u32) << 8 | *c.get(2).unwrap_or(&0) as u32;
        s.push(A[(n >> 18) as usize & 63] as char);
        s.push(A[(n >> 12) as usize & 63] as char);
        s.push(if c.len() > 1 { A[(n >> 6) as usize & 63] as char } else { '=' });
        s.push(if c.len() > 2 { A[n as usize & 63] as char } else { '=' });
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_of_abc_matches_fips_180_example() {
        // FIPS 180-4 example "abc" (from memory; also the NIST CSRC example value).
        let h = sha256(b"abc");
        let hex: String = h.iter().map(|b| format!("{b:02x}")).collect();
        assert_eq!(hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
    }

    #[test]
    fn base64_matches_rfc_4648_vectors() {
        // RFC 4648 §10 test vectors.
        assert_eq!(base64(b"fooba"), "Zm9vYmE=");
        assert_eq!(base64(b"foobar"), "Zm9vYmFy");
        assert_eq!(base64(b"f"), "Zg==");
    }

    #[test]
    fn inline_script_is_hashed_and_policy_goes_first() {
        let html = "<html><head><title>x</title><script type=\"module\">init();</script><script src=\"a.js\"></script></head></html>";
        let out = with_policy(html).unwrap();
        assert!(out.starts_with("<html><head>\n  <meta http-equiv=\"Content-Security-Policy\""));
        assert!(out.contains(&format!("'sha256-{}'", base64(&sha256(b"init();")))));
        assert_eq!(out.matches("'sha256-").count(), 1);
        // Workers only from the page's own files: no blob: or data: worker, no inline script.
        assert!(out.contains("worker-src 'self';"));
        assert!(!out.contains("unsafe-inline") && !out.contains("worker-src 'self' blob:"));
    }
}
