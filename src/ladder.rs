//! Multiplier ladder circuit model.
