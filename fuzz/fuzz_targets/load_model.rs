//! The model loader on arbitrary TOML and CSV text: it must answer with a
//! model or with diagnostics, never panic, hang or allocate without bound.
#![no_main]

use libfuzzer_sys::fuzz_target;

mod split;

fuzz_target!(|data: &[u8]| {
    let texts = split::split(data);
    match texts.load() {
        Ok(m) => {
            // The summary `check` prints reads these.
            let _ = (m.n_nodes(), m.n_members(), m.n_fixed(), m.total_reference_load());
        }
        Err(e) => {
            // Every diagnostic must render (this is what the user reads).
            assert!(!e.diagnostics.is_empty(), "an error without a diagnostic");
            let _ = e.to_string();
        }
    }
});
