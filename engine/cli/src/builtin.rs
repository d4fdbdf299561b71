//! The one list of built-in modules. Adding a module to packwright means
//! adding its crate to Cargo.toml and one line here.

use std::sync::Arc;

use std::path::Path;

use packwright_api::Module;
use packwright_core::{Diagnostic, ModuleOrigin, Registry};

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

/// The built-in modules plus the external modules of the project at
/// `project_root` (its `modules/*/module.yaml` and those named in
/// project.yaml). A folder without project.yaml gets the built-ins only.
pub fn registry_for(project_root: &Path) -> Result<Registry, Vec<Diagnostic>> {
    let mut registry = registry();
    if !project_root.join("project.yaml").is_file() {
        return Ok(registry);
    }
    // A project.yaml that does not load is reported by the run itself.
    let named = packwright_core::project::named_modules(project_root);
    packwright_external::register(&mut registry, project_root, &named)?;
    Ok(registry)
}
