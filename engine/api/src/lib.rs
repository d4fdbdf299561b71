//! The plug-in contract for packwright calculation modules.
//!
//! A module author depends on this crate alone. A module is a type that
//! implements [`Module`]: it [declares](ModuleDeclaration) its inputs,
//! outputs, criteria, checks, method, assumptions, cautions and references,
//! and [computes](Module::compute) an [`Outcome`] from resolved [`Inputs`].
//! Inside a module every physical value is a `uom` quantity (re-exported in
//! [`quantity`]), so `Length + Time` does not compile; this crate converts
//! between those types and the SI numbers the engine stores.
//!
//! This crate depends on no other crate of packwright's.
//!
//! ```
//! use packwright_api::prelude::*;
//!
//! struct Slip;
//! impl Module for Slip {
//!     fn declaration(&self) -> ModuleDeclaration {
//!         ModuleDeclaration {
//!             name: "slip".into(),
//!             version: "1.0.0".into(),
//!             purpose: "Force to bring a feed up to belt speed.".into(),
//!             inputs: vec![
//!                 InputSpec::quantity("mass_flow", Dimension::MassRate, "feed rate").above(0.0),
//!                 InputSpec::quantity("belt_speed", Dimension::Velocity, "belt speed").above(0.0),
//!             ],
//!             outputs: vec![OutputSpec::new("force", Dimension::Force, "kN", "lbf", "ṁ v")],
//!             criteria: vec![], checks: vec![], method: vec![],
//!             assumptions: vec![], cautions: vec![], references: vec![],
//!         }
//!     }
//!     fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
//!         let m_dot: MassRate = inputs.quantity("mass_flow")?;
//!         let v: Velocity = inputs.quantity("belt_speed")?;
//!         let mut out = Outcome::new();
//!         out.set("force", m_dot * v);
//!         Ok(out)
//!     }
//! }
//! assert!(Slip.declaration().validate().is_ok());
//! ```

pub mod compute;
pub mod declare;
pub mod node;
pub mod quantity;
pub mod units;

pub use compute::{
    parse_scalar, Axis, CalcError, Check, Inputs, LayerStyle, Measure, Origin, Outcome, Plot,
    PlotLayer, Relation, ResolvedInput, Series, Status, Value,
};
pub use declare::{
    Bound, CheckSpec, CriterionSpec, InputKind, InputSpec, MethodStep, ModuleDeclaration, Need,
    OutputSpec, Range,
};
pub use node::{file_name, span_file, with_span_file, Node, NodeValue, Span};
pub use units::{Dimension, UnitSystem};

/// A calculation module. Built-in modules and external ones (a process
/// speaking JSON) implement the same trait.
pub trait Module: Send + Sync {
    /// What the module is, needs and gives. Called once at registration.
    fn declaration(&self) -> ModuleDeclaration;

    /// Computes one item. The engine has already checked every input against
    /// the declaration (presence, dimension, range), filled defaults and
    /// resolved links; the engine checks the outcome against it afterwards
    /// (every output declared, finite, of its dimension).
    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError>;

    /// Checks what the declaration cannot express: the shape of a
    /// structured input, inputs that one case needs and another does not.
    /// `packwright check` calls it, so every problem it returns should be a
    /// [`CalcError::Input`] pointing at a span. The engine calls it for items
    /// without links; an item with links is checked when it runs, so
    /// `compute` should begin with the same validation (its input errors are
    /// reported as bad input, like these).
    fn check_inputs(&self, inputs: &Inputs) -> Vec<CalcError> {
        let _ = inputs;
        Vec::new()
    }

    /// Extra text that identifies exactly what runs (an external module's
    /// executable digest); it enters the cache key and the package.
    fn fingerprint(&self) -> Option<String> {
        None
    }
}

/// Everything a module usually needs, in one `use`.
pub mod prelude {
    pub use crate::compute::{
        Axis, CalcError, Check, Inputs, LayerStyle, Measure, Outcome, Plot, Series, Status,
    };
    pub use crate::declare::{
        CheckSpec, CriterionSpec, InputSpec, MethodStep, ModuleDeclaration, OutputSpec,
    };
    pub use crate::node::{Node, NodeValue, Span};
    pub use crate::quantity::{
        si, standard_gravity, Acceleration, Angle, Area, Energy, Force, ForcePerLength, Length,
        LinearMassDensity, Mass, MassDensity, MassRate, Power, Pressure, Ratio, SiQuantity,
        Stiffness, Time, Velocity, VolumeRate,
    };
    pub use crate::units::Dimension;
    pub use crate::Module;
}
