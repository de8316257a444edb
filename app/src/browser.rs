//! Glue to the browser: saved state, the URL fragment, files in and out.
//! Everything here fails soft: a browser without storage or a refused
//! clipboard gives a message, never a panic.

use tussock_core::Scenario;
use wasm_bindgen::{JsCast, JsValue};

/// Key of the autosaved scenario in the browser's local storage.
pub const STORAGE_KEY: &str = "tussock.scenario";

fn storage() -> Option<web_sys::Storage> {
    web_sys::window()?.local_storage().ok().flatten()
}

/// Save the scenario; false when the browser refuses (private mode, full).
pub fn save(scenario: &Scenario) -> bool {
    storage().is_some_and(|s| s.set_item(STORAGE_KEY, &scenario.to_json_pretty()).is_ok())
}

/// The autosaved scenario, if there is a valid one.
pub fn load_saved() -> Option<Scenario> {
    let text = storage()?.get_item(STORAGE_KEY).ok().flatten()?;
    let scenario = Scenario::from_json(&text).ok()?;
    scenario.validate().ok()?;
    Some(scenario)
}

pub fn clear_saved() {
    if let Some(s) = storage() {
        let _ = s.remove_item(STORAGE_KEY);
    }
}

/// The page's URL fragment, without `#`.
pub fn fragment() -> String {
    web_sys::window()
        .and_then(|w| w.location().hash().ok())
        .unwrap_or_default()
        .trim_start_matches('#')
        .to_string()
}

/// Replace the fragment without adding a history entry or reloading.
pub fn set_fragment(fragment: &str) {
    if let Some(w) = web_sys::window() {
        if let Ok(history) = w.history() {
            let url = if fragment.is_empty() {
                w.location().pathname().unwrap_or_default()
            } else {
                format!("#{fragment}")
            };
            let _ = history.replace_state_with_url(&JsValue::NULL, "", Some(&url));
        }
    }
}

/// The page's address with a fragment, for a share link.
pub fn link_with(fragment: &str) -> String {
    let base = web_sys::window()
        .and_then(|w| w.location().href().ok())
        .unwrap_or_default();
    let base = base.split('#').next().unwrap_or_default().to_string();
    format!("{base}#{fragment}")
}

/// Put text on the clipboard (best effort; the link is also shown).
pub fn copy_to_clipboard(text: &str) {
    if let Some(w) = web_sys::window() {
        let _ = w.navigator().clipboard().write_text(text);
    }
}

/// Offer `text` as a file download named `name`.
pub fn download(name: &str, mime: &str, text: &str) -> Result<(), String> {
    let parts = js_sys_array(text);
    let options = web_sys::BlobPropertyBag::new();
    options.set_type(mime);
    let blob = web_sys::Blob::new_with_str_sequence_and_options(&parts, &options)
        .map_err(|_| "cannot make the file")?;
    let url = web_sys::Url::create_object_url_with_blob(&blob)
        .map_err(|_| "cannot make a download link")?;
    let result = download_url(name, &url);
    let _ = web_sys::Url::revoke_object_url(&url);
    result
}

/// Offer the resource at `url` (a blob: or data: URL) as a download.
pub fn download_url(name: &str, url: &str) -> Result<(), String> {
    let document = web_sys::window()
        .and_then(|w| w.document())
        .ok_or("no document")?;
    let anchor: web_sys::HtmlAnchorElement = document
        .create_element("a")
        .map_err(|_| "cannot make a download link")?
        .dyn_into()
        .map_err(|_| "cannot make a download link")?;
    anchor.set_href(url);
    anchor.set_download(name);
    anchor.click();
    Ok(())
}

fn js_sys_array(text: &str) -> JsValue {
    let array = js_sys::Array::new();
    array.push(&JsValue::from_str(text));
    array.into()
}

/// Ask the user to confirm; false if the browser cannot ask.
pub fn confirm(message: &str) -> bool {
    web_sys::window()
        .and_then(|w| w.confirm_with_message(message).ok())
        .unwrap_or(false)
}

/// Read a file the user chose or dropped, as text.
pub async fn read_text(file: web_sys::File) -> Result<String, String> {
    let value = wasm_bindgen_futures::JsFuture::from(file.text())
        .await
        .map_err(|_| "the browser could not read the file".to_string())?;
    value
        .as_string()
        .ok_or_else(|| "the file is not text".to_string())
}
