//! A panic in WebAssembly kills the page. This hook makes sure the user sees
//! a message instead of a frozen page, and the console gets the details.

use wasm_bindgen::JsValue;

/// Install the panic hook once, before the app renders.
pub fn install_hook() {
    std::panic::set_hook(Box::new(|info| {
        let message = info.to_string();
        web_sys::console::error_1(&JsValue::from_str(&format!("Tussock panicked: {message}")));
        show_fatal(&message);
    }));
}

/// Replace the page's content with a plain error banner.
pub fn show_fatal(message: &str) {
    let Some(document) = web_sys::window().and_then(|w| w.document()) else {
        return;
    };
    let Some(body) = document.body() else {
        return;
    };
    if let Ok(banner) = document.create_element("div") {
        banner.set_class_name("fatal");
        banner.set_attribute("role", "alert").ok();
        // Text only: the message never reaches the page as HTML.
        banner.set_text_content(Some(&format!(
            "Tussock hit an internal error and stopped. Reload the page to start again, and please report this message: {message}"
        )));
        body.prepend_with_node_1(&banner).ok();
    }
}
