//! The belt-pickup module (being written).
