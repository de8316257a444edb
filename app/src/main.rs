fn main() {
    tussock_app::start();
}
