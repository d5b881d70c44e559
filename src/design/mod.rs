//! The design file: parse, validate, expand generators into a `model::Model`.
