//! Lower bounds on conditional von Neumann entropies such as H(A|X=x*, E), device-independently,
//! by the Gauss–Radau hierarchy of Brown, Fawzi & Fawzi (Quantum 8, 1445 (2024);
//! arXiv:2106.13692). The relative entropy behind H(A|E) is written as an integral over
//! t ∈ [0, 1]; a Gauss–Radau rule with its last node fixed at t = 1 turns it into a finite sum
//! whose terms are non-commutative polynomial optimisations, each bounded by an NPA-type
//! relaxation with the adversary's operators ([`relaxation`]), summed in [`hierarchy`].

pub mod hierarchy;
pub mod quadrature;
pub mod relaxation;
pub mod symmetry;

pub use hierarchy::{
    conditional_entropy, conditional_entropy_reporting, default_level, event_terms,
    ConditionalEntropy, EntropyConstraint, EntropyOptions, EntropySymmetry, MinTradeoff, NodeBound,
    PreparedHierarchy, Preprocessing, Target,
};
pub use relaxation::{AdversaryWords, MomentField};
