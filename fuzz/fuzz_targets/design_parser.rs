//! Fuzz target: `design::from_str` on arbitrary text must return a model or a located error,
//! never panic, and every problem's span and line must lie within the text.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    match holdoff::design::from_str(text, "fuzz.toml") {
        Ok(_) => {}
        Err(e) => {
            assert!(!e.problems.is_empty());
            let lines = text.split('\n').count();
            for p in &e.problems {
                assert!(p.span.start <= p.span.end, "{p:?}");
                assert!(p.span.end <= text.len(), "{p:?}");
                assert!(p.line >= 1 && p.line <= lines, "{p:?}");
                assert!(p.column >= 1, "{p:?}");
            }
            // The rendered diagnostic must not panic either.
            let _ = holdoff::design::diagnostic::render(&e, text, false);
        }
    }
});
