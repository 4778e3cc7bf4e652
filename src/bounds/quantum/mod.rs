//! Quantum bounds. Upper: [`npa`], the NPA hierarchy with a verified bound from the dual
//! solution, on the operator algebra of [`words`]. Lower: [`seesaw`], explicit strategies
//! ([`crate::model::strategy`]) found by alternating exact optimisation, and [`analysis`] of what they need
//! (entanglement) and how robust they are (noise, detection efficiency).

pub mod analysis;
pub mod design;
mod flips;
pub mod membership;
pub mod npa;
pub mod seesaw;
pub mod selftest;
pub mod symmetric;
pub mod words;
