//! Rendering the pipeline's reports: aligned text for people ([`text`]), one JSON object for
//! programs ([`json`]), the review document in HTML or Markdown ([`document`]) and SVG charts
//! ([`charts`]), and bound tables in CSV and LaTeX ([`tables`]). Nothing here computes a bound.

pub mod charts;
pub mod document;
pub mod json;
pub mod tables;
pub mod text;
