//! Entry point of the page: installs the panic hook and mounts the notebook.
fn main() {
    hysteron_app::start();
}
