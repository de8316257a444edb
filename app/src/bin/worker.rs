//! The Web Worker that runs Tussock's long jobs off the page's thread.
fn main() {
    tussock_app::worker::start();
}
