//! placeholder during bootstrap
