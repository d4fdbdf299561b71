//! The hopper-outlet module (being written).
