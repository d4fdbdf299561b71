//! The packwright engine (being built).
