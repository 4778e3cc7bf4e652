//! Quantum bounds. [`npa`]: upper bounds from the NPA hierarchy of semidefinite relaxations,
//! with a verified bound from the dual solution; [`words`]: the operator algebra it rests on.

pub mod npa;
pub mod words;
