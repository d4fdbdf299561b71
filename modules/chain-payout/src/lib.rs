//! The chain-payout module (being written).
