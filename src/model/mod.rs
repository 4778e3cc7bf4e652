//! The model every bound reads: the flat table of a game ([`scenario`]), its Collins–Gisin
//! coordinates ([`collins_gisin`]) and quantum strategies with their Born-rule value
//! ([`strategy`]) and what noise makes of them ([`noise`]). Nothing here knows about files or solvers.

pub mod collins_gisin;
pub mod correlations;
pub mod counts;
pub mod noise;
pub mod region;
pub mod scenario;
pub mod strategy;
pub mod symmetry;
