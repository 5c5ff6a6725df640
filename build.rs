//! Link the test binaries against the same libpython as the interpreter (needed because the
//! crate is also an rlib that `cargo test` links without the `extension-module` feature).
fn main() {
    pyo3_build_config::add_libpython_rpath_link_args();
}
