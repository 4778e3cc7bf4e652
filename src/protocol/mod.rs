//! What bounds mean for a device-independent protocol: finite-statistics margins ([`finite`]),
//! certified randomness ([`randomness`]) and key figures ([`key`]); the review that puts them
//! together is [`crate::pipeline::review`]. Every figure comes with the assumptions it rests on; none is a security proof.

pub mod accumulation;
pub mod finite;
pub mod key;
pub mod randomness;

/// The caution printed with every cryptographic figure.
pub const CAUTION: &str = "These figures rest on stated assumptions (the rounds' independence where said, asymptotic limits where said, quantum theory and the absence of side channels) and are not a security proof. Defer to peer-reviewed security proofs and to the certification practice that applies to your protocol.";
