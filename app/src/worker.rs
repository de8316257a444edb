//! Glue for the worker side of [`crate::jobs`]: receive a job, run it,
//! post its updates. Everything computed is in `jobs::run`; a panic is
//! reported to the page as a failed job instead of a silent death.
//!
//! Stochastic runs (an ensemble, a founders comparison) are spread over
//! helper workers, one per core the browser reports ([`crate::spread`]
//! plans it); this worker then only hands out runs and gathers them. A
//! helper is this same worker script, sent `[job bytes, first run, end]`
//! (an array, where the page sends bytes). With one core, or where a worker
//! cannot start workers of its own, it runs the job itself. Terminating
//! this worker (the page's cancel) ends its helpers with it.

use std::cell::{Cell, RefCell};

use js_sys::{Array, Uint8Array};
use wasm_bindgen::prelude::*;
use wasm_bindgen::JsCast;
use web_sys::{DedicatedWorkerGlobalScope, ErrorEvent, MessageEvent, Worker};

use crate::jobs::{self, Job, Update};
use crate::spread::{self, HelperAnswer, Spread};

/// Helpers for one job at most: beyond this the page's memory grows
/// (a module instance each) for little gain.
const MAX_HELPERS: usize = 16;

thread_local! {
    /// The job being run, for the panic report.
    static CURRENT: Cell<u64> = const { Cell::new(0) };
    /// The job being spread over helpers, if any.
    static SPREAD: RefCell<Option<Helpers>> = const { RefCell::new(None) };
}

/// A helper's message and error listeners, kept alive while it works.
type Listeners = (Closure<dyn Fn(MessageEvent)>, Closure<dyn Fn(ErrorEvent)>);

struct Helpers {
    spread: Spread,
    /// The page's job, as it came.
    job: Uint8Array,
    workers: Vec<Worker>,
    /// Per helper: it has loaded (or failed to), and it has been ended.
    loaded: Vec<bool>,
    ended: Vec<bool>,
    _listeners: Vec<Listeners>,
}

impl Helpers {
    /// End the helpers that have loaded. One still loading is ended when
    /// it says it is ready: ended while loading, it reports a failed script
    /// load as an uncaught error, up to the page's console.
    fn end_loaded(&mut self) {
        for (k, worker) in self.workers.iter().enumerate() {
            if self.loaded[k] && !self.ended[k] {
                // No message already on its way may reach a listener
                // dropped with these helpers.
                worker.set_onmessage(None);
                worker.set_onerror(None);
                worker.terminate();
                self.ended[k] = true;
            }
        }
    }

    fn all_ended(&self) -> bool {
        self.ended.iter().all(|&e| e)
    }
}

fn scope() -> Option<DedicatedWorkerGlobalScope> {
    js_sys::global()
        .dyn_into::<DedicatedWorkerGlobalScope>()
        .ok()
}

fn post(message: &impl serde::Serialize) {
    if let Some(scope) = scope() {
        let bytes = Uint8Array::from(jobs::encode(message).as_slice());
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
        let data = event.data();
        if Array::is_array(&data) {
            post(&helper_work(&Array::from(&data)));
            return;
        }
        let bytes = Uint8Array::new(&data).to_vec();
        match jobs::decode::<Job>(&bytes) {
            Ok(job) => {
                CURRENT.with(|c| c.set(job.id));
                if !spread_out(&job, Uint8Array::new(&data)) {
                    jobs::run(&job, &js_sys::Date::now, &mut |update| {
                        post(&update);
                        true
                    });
                }
            }
            Err(message) => post(&Update::Failed { id: 0, message }),
        }
    });
    scope.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
    on_message.forget();
    post(&Update::Ready);
}

/// A helper's work: `[job bytes, first run, end]`.
fn helper_work(message: &Array) -> HelperAnswer {
    let bytes = Uint8Array::new(&message.get(0)).to_vec();
    let bound = |i| {
        message
            .get(i)
            .as_f64()
            .filter(|x| *x >= 0.0 && x.is_finite())
    };
    match (jobs::decode::<Job>(&bytes), bound(1), bound(2)) {
        (Ok(job), Some(start), Some(end)) if start <= end => {
            CURRENT.with(|c| c.set(job.id));
            spread::run_part(&job, start as u64..end as u64)
        }
        (Err(message), ..) => HelperAnswer::Failed { message },
        _ => HelperAnswer::Failed {
            message: "a helper was sent no runs to do".into(),
        },
    }
}

/// Cores the browser reports (1 when it does not say).
fn cores() -> usize {
    scope()
        .map(|s| s.navigator().hardware_concurrency())
        .filter(|n| n.is_finite() && *n >= 1.0)
        .map_or(1, |n| n as usize)
}

/// Start `job` on helpers if it is stochastic runs and there are cores to
/// spread them over; false when this worker should run it itself.
fn spread_out(job: &Job, bytes: Uint8Array) -> bool {
    // The page sends one job per worker; should another come, the first
    // one's helpers go.
    if let Some(old) = SPREAD.with(|s| s.borrow_mut().take()) {
        for worker in &old.workers {
            worker.terminate();
        }
    }
    let count = cores().min(MAX_HELPERS);
    if count < 2 {
        return false;
    }
    let Some(spread) = Spread::new(job, count) else {
        return false;
    };
    let mut workers = Vec::with_capacity(count);
    let mut listeners = Vec::with_capacity(count);
    for helper in 0..count {
        let Ok(worker) = Worker::new(crate::workers::WORKER_SCRIPT) else {
            break;
        };
        let on_message = Closure::<dyn Fn(MessageEvent)>::new(move |event: MessageEvent| {
            let bytes = Uint8Array::new(&event.data()).to_vec();
            let answer = jobs::decode::<HelperAnswer>(&bytes)
                .unwrap_or_else(|message| HelperAnswer::Failed { message });
            from_helper(helper, answer);
        });
        let on_error = Closure::<dyn Fn(ErrorEvent)>::new(move |event: ErrorEvent| {
            event.prevent_default();
            let message = format!("a helper worker stopped: {}", event.message());
            with_helpers(|h| {
                h.loaded[helper] = true;
                h.spread.fail(message)
            });
        });
        worker.set_onmessage(Some(on_message.as_ref().unchecked_ref()));
        worker.set_onerror(Some(on_error.as_ref().unchecked_ref()));
        workers.push(worker);
        listeners.push((on_message, on_error));
    }
    if workers.is_empty() {
        return false;
    }
    SPREAD.with(|s| {
        *s.borrow_mut() = Some(Helpers {
            spread,
            job: bytes,
            loaded: vec![false; workers.len()],
            ended: vec![false; workers.len()],
            workers,
            _listeners: listeners,
        })
    });
    true
}

/// A helper's message: a loaded helper gets runs to do, runs done are
/// gathered and the helper gets more.
fn from_helper(helper: usize, answer: HelperAnswer) {
    with_helpers(|h| {
        if let Some(loaded) = h.loaded.get_mut(helper) {
            *loaded = true;
        }
        let now = js_sys::Date::now();
        let updates = h.spread.receive(helper, answer, now);
        if let (Some(runs), Some(worker)) =
            (h.spread.next_piece(helper, now), h.workers.get(helper))
        {
            let message = Array::of3(
                &h.job,
                &JsValue::from_f64(runs.start as f64),
                &JsValue::from_f64(runs.end as f64),
            );
            let _ = worker.post_message(&message);
        }
        updates
    });
}

/// Apply `act` to the helpers, post its updates to the page, and end the
/// helpers once the job is over.
fn with_helpers(act: impl FnOnce(&mut Helpers) -> Vec<Update>) {
    SPREAD.with(|s| {
        let mut slot = s.borrow_mut();
        let Some(helpers) = slot.as_mut() else {
            return;
        };
        for update in act(helpers) {
            post(&update);
        }
        if helpers.spread.is_over() {
            helpers.end_loaded();
            if helpers.all_ended() {
                // Dropping the listeners here is safe: wasm-bindgen frees
                // the one running when it returns.
                slot.take();
            }
        }
    });
}
