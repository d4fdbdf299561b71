//! The hoist-loads module (being written).
