// Starts Tussock's background worker: the wasm-bindgen glue, then its module.
importScripts("./tussock-worker.js");
wasm_bindgen({ module_or_path: "./tussock-worker_bg.wasm" });
