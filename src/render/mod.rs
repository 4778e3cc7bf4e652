//! Rendering: text and JSON reports ([`report`]) and SVG charts ([`charts`]).

pub mod charts;
pub mod report;
