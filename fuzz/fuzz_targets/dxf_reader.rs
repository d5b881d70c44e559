//! Fuzz target: `drawing::read_outline` on arbitrary bytes (ASCII or binary DXF, or neither) must
//! return an outline or a located error, never panic; an outline it returns must lie at r ≥ 0
//! with a finite, non-empty bounding box.
#![no_main]

use holdoff::drawing::{Frame, Pick, read_outline};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    // The first byte picks the layer and the loop, the rest is the drawing.
    let Some((&head, bytes)) = data.split_first() else {
        return;
    };
    let layers = ["TERMINAL", "HOOP", "POST", "0"];
    let pick = Pick {
        layer: layers[(head & 3) as usize].to_string(),
        handle: None,
        index: (head & 4 != 0).then_some(1 + (head >> 3) as usize % 4),
    };
    let units = if head & 0x80 != 0 { Some("mm") } else { None };
    match read_outline(bytes, "fuzz.dxf", &pick, units, &Frame::default()) {
        Ok(shape) => {
            let b = shape.bbox();
            assert!(b.r_min >= 0.0 && b.r_min <= b.r_max && b.z_min <= b.z_max, "{b:?}");
            assert!(b.r_max.is_finite() && b.z_min.is_finite() && b.z_max.is_finite(), "{b:?}");
        }
        Err(e) => {
            // The message must render.
            let _ = e.to_string();
        }
    }
});
