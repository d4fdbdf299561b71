//! The set of modules a run may use, each with its declaration.
//!
//! The engine never names a module: the binary registers the built-in ones
//! and the external ones it discovered. Owns the module objects.

use std::collections::BTreeMap;
use std::sync::Arc;

use packwright_api::{Module, ModuleDeclaration};

/// Where a module comes from, for `packwright modules` and the package.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ModuleOrigin {
    /// Compiled into the binary.
    BuiltIn,
    /// An external module: its manifest file.
    External(String),
}

/// A registered module.
#[derive(Clone)]
pub struct Registered {
    /// The module.
    pub module: Arc<dyn Module>,
    /// Its declaration, taken once.
    pub declaration: ModuleDeclaration,
    /// Where it comes from.
    pub origin: ModuleOrigin,
    /// What exactly runs (an external module's digest), if more than the version.
    pub fingerprint: Option<String>,
}

/// Modules by name.
#[derive(Clone, Default)]
pub struct Registry {
    modules: BTreeMap<String, Registered>,
}

impl Registry {
    /// An empty registry.
    pub fn new() -> Registry {
        Registry::default()
    }

    /// Adds a module; its declaration must be valid and its name new.
    pub fn register(
        &mut self,
        module: Arc<dyn Module>,
        origin: ModuleOrigin,
    ) -> Result<(), String> {
        let declaration = module.declaration();
        declaration.validate().map_err(|p| {
            format!(
                "module `{}` is badly declared: {}",
                declaration.name,
                p.join("; ")
            )
        })?;
        if self.modules.contains_key(&declaration.name) {
            return Err(format!(
                "a module named `{}` is registered twice",
                declaration.name
            ));
        }
        let fingerprint = module.fingerprint();
        self.modules.insert(
            declaration.name.clone(),
            Registered {
                module,
                declaration,
                origin,
                fingerprint,
            },
        );
        Ok(())
    }

    /// The module named `name`.
    pub fn get(&self, name: &str) -> Option<&Registered> {
        self.modules.get(name)
    }

    /// All modules, by name.
    pub fn iter(&self) -> impl Iterator<Item = &Registered> {
        self.modules.values()
    }

    /// The names, sorted.
    pub fn names(&self) -> impl Iterator<Item = &str> {
        self.modules.keys().map(String::as_str)
    }
}
