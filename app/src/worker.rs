//! Glue for the worker side of [`crate::jobs`]: receive a job, run it,
//! post its updates. Everything computed is in `jobs::run`; a panic is
//! reported to the page as a failed job instead of a silent death.

use std::cell::Cell;

use js_sys::Uint8Array;
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{DedicatedWorkerGlobalScope, MessageEvent};

use crate::jobs::{self, Job, Update};

thread_local! {
    /// The job being run, for the panic report.
    static CURRENT: Cell<u64> = const { Cell::new(0) };
}

fn scope() -> Option<DedicatedWorkerGlobalScope> {
    js_sys::global()
        .dyn_into::<DedicatedWorkerGlobalScope>()
        .ok()
}

fn post(update: &Update) {
    if let Some(scope) = scope() {
        let bytes = Uint8Array::from(jobs::encode(update).as_slice());
        let _ = scope.post_message(&bytes);
    }
}

/// Listen for jobs, then tell the page the worker is ready (messages sent
/// before the module has loaded would be lost).
pub fn start() {
    std::panic::set_hook(Box::new(|info| {
        post(&Update::Failed {
            id: CURRENT.with(Cell::get),
            message: format!("internal error, please report it: {info}"),
        });
    }));
    let Some(scope) = scope() else { return };
    let on_message = Closure::<dyn Fn(MessageEvent)>::new(|event: MessageEvent| {
        let bytes = Uint8Array::new(&event.data()).to_vec();
        match jobs::decode::<Job>(&bytes) {
            Ok(job) => {
                CURRENT.with(|c| c.set(job.id));
                jobs::run(&job, &js_sys::Date::now, &mut |update| {
                    post(&update);
                    true
                });
            }
            Err(message) => post(&Update::Failed { id: 0, message }),
        }
    });
    scope.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
    on_message.forget();
    post(&Update::Ready);
}
