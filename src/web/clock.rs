//! The page's clock for the quick measurements behind the time estimates
//! (`performance.now()` where there is one, in the page, a worker and Node;
//! else `Date.now()`). Milliseconds.

use js_sys::{Function, Reflect};
use wasm_bindgen::{JsCast, JsValue};

pub(crate) fn now_ms() -> f64 {
    let global = js_sys::global();
    if let Ok(perf) = Reflect::get(&global, &JsValue::from_str("performance")) {
        if let Ok(now) = Reflect::get(&perf, &JsValue::from_str("now")) {
            if let Some(f) = now.dyn_ref::<Function>() {
                if let Some(t) = f.call0(&perf).ok().and_then(|v| v.as_f64()) {
                    return t;
                }
            }
        }
    }
    js_sys::Date::now()
}
