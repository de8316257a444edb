//! The page's side of the workers: at most one Web Worker per kind of job,
//! a fresh one for every job (so no job inherits another's state; the
//! browser caches the worker's code), sent its job as CBOR, its updates
//! handed to a callback. Cancelling terminates the worker, the only way to
//! stop a computation that never yields.

use std::cell::RefCell;
use std::collections::BTreeMap;

use js_sys::Uint8Array;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{ErrorEvent, MessageEvent, Worker};

use crate::jobs::{self, Job, TaskKind, Update};

/// The worker's loader script (`static/worker-loader.js`, copied next to
/// the page by trunk).
pub const WORKER_SCRIPT: &str = "./worker-loader.js";

struct Slot {
    worker: Worker,
    ready: bool,
    /// A job waiting for the worker to load.
    queued: Option<Vec<u8>>,
    _on_message: Closure<dyn Fn(MessageEvent)>,
    _on_error: Closure<dyn Fn(ErrorEvent)>,
}

thread_local! {
    static SLOTS: RefCell<BTreeMap<TaskKind, Slot>> = const { RefCell::new(BTreeMap::new()) };
    static NEXT_ID: std::cell::Cell<u64> = const { std::cell::Cell::new(1) };
}

/// A fresh job id.
pub fn next_id() -> u64 {
    NEXT_ID.with(|n| {
        let id = n.get();
        n.set(id + 1);
        id
    })
}

fn spawn(kind: TaskKind, on_update: impl Fn(Update) + 'static) -> Result<Slot, String> {
    let worker = Worker::new(WORKER_SCRIPT)
        .map_err(|_| "this browser could not start a background worker".to_string())?;
    let on_update = std::rc::Rc::new(on_update);
    let relay = on_update.clone();
    let on_message = Closure::<dyn Fn(MessageEvent)>::new(move |event: MessageEvent| {
        let bytes = Uint8Array::new(&event.data()).to_vec();
        match jobs::decode::<Update>(&bytes) {
            Ok(Update::Ready) => mark_ready(kind),
            Ok(update) => relay(update),
            Err(message) => relay(Update::Failed { id: 0, message }),
        }
    });
    let on_error = Closure::<dyn Fn(ErrorEvent)>::new(move |event: ErrorEvent| {
        event.prevent_default();
        // The worker may raise more than one error; none may reach this
        // listener once it is dropped with its slot.
        if let Some(slot) = SLOTS.with(|s| s.borrow_mut().remove(&kind)) {
            slot.worker.set_onmessage(None);
            slot.worker.set_onerror(None);
            slot.worker.terminate();
        }
        on_update(Update::Failed {
            id: 0,
            message: format!("the background worker stopped: {}", event.message()),
        });
    });
    worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
    worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
    Ok(Slot {
        worker,
        ready: false,
        queued: None,
        _on_message: on_message,
        _on_error: on_error,
    })
}

fn mark_ready(kind: TaskKind) {
    SLOTS.with(|s| {
        if let Some(slot) = s.borrow_mut().get_mut(&kind) {
            slot.ready = true;
            if let Some(bytes) = slot.queued.take() {
                send_bytes(&slot.worker, &bytes);
            }
        }
    });
}

fn send_bytes(worker: &Worker, bytes: &[u8]) {
    let _ = worker.post_message(&Uint8Array::from(bytes));
}

/// Run `job` in the worker for its kind (cancelling any job of that kind
/// still running); its updates go to `on_update`.
pub fn start(job: &Job, on_update: impl Fn(Update) + 'static) -> Result<(), String> {
    let kind = job.task.kind();
    cancel(kind);
    let mut slot = spawn(kind, on_update)?;
    slot.queued = Some(jobs::encode(job));
    SLOTS.with(|s| s.borrow_mut().insert(kind, slot));
    Ok(())
}

/// Stop the job of this kind now.
pub fn cancel(kind: TaskKind) {
    if let Some(slot) = SLOTS.with(|s| s.borrow_mut().remove(&kind)) {
        slot.worker.terminate();
    }
}
