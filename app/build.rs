//! The page built in pieces (DEVELOPERS.md, "Loading in pieces"): with `HYSTERON_SPLIT=1` in the
//! environment (set by `cargo xtask build`/`serve`/`test` for Trunk's release build), the page's
//! studies are compiled as Leptos `#[lazy]` functions (`--cfg hysteron_split`) and the page's binary
//! is linked with its relocations (`--emit-relocs`), which the split step after Trunk needs to cut the
//! module. Without it (unit tests, a plain `trunk build`) the page is one module.

fn main() {
    println!("cargo::rerun-if-env-changed=HYSTERON_SPLIT");
    println!("cargo::rustc-check-cfg=cfg(hysteron_split)");
    let wasm = std::env::var("CARGO_CFG_TARGET_FAMILY").is_ok_and(|f| f == "wasm");
    if wasm && std::env::var("HYSTERON_SPLIT").is_ok_and(|v| v == "1") {
        println!("cargo::rustc-cfg=hysteron_split");
        println!("cargo::rustc-link-arg-bin=hysteron-app=--emit-relocs");
    }
}
