//! The one list of built-in modules. Adding a module to packwright means
//! adding its crate to Cargo.toml and one line here.

use std::sync::Arc;

use packwright_api::Module;
use packwright_core::{ModuleOrigin, Registry};

/// Every module compiled into the binary.
pub fn modules() -> Vec<Arc<dyn Module>> {
    vec![
        Arc::new(packwright_belt_pickup::BeltPickup),
        Arc::new(packwright_chute_discharge::ChuteDischarge),
        Arc::new(packwright_hopper_outlet::HopperOutlet),
        Arc::new(packwright_chain_payout::ChainPayout),
        Arc::new(packwright_hoist_loads::HoistLoads),
    ]
}

/// A registry of the built-in modules.
pub fn registry() -> Registry {
    let mut registry = Registry::new();
    for module in modules() {
        registry
            .register(module, ModuleOrigin::BuiltIn)
            .expect("built-in modules are declared correctly (their tests check it)");
    }
    registry
}
