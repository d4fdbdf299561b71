//! The chute-discharge module (being written).
