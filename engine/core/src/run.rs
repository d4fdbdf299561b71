//! Running a plan: links filled from the items they come from, each item
//! computed by its module (independent items in parallel), every outcome
//! checked against the module's declaration, and each item's resolved
//! inputs digested.
//!
//! Owns no state; results come back as values.

use std::collections::BTreeMap;
use std::ops::Range;
use std::sync::{Arc, Mutex};

use packwright_api::{
    CalcError, Inputs, Measure, Module, ModuleDeclaration, Origin, Outcome, ResolvedInput, Value,
};
use rayon::prelude::*;
use sha2::{Digest, Sha256};

use crate::deferred::Deferred;
use crate::registry::Registry;
use crate::resolve::{Plan, PlannedItem};

/// One computed item.
#[derive(Debug, Clone)]
pub struct ItemRun {
    /// The plan entry.
    pub item: Arc<PlannedItem>,
    /// The inputs with links filled (the plan entry's own, shared, when it
    /// has no links).
    pub inputs: Deferred<Inputs>,
    /// The module version that ran.
    pub module_version: String,
    /// Digest of the resolved inputs, module and tool version.
    pub inputs_digest: String,
    /// What the module produced (decoded from the cache when first looked
    /// at, for an item taken from it).
    pub outcome: SharedOutcome,
    /// Whether the outcome came from the cache rather than a computation.
    pub from_cache: bool,
    /// The digest of the inputs' names and origins
    /// ([`crate::index::origins_digest`]), when it was at hand without
    /// decoding the inputs (an item whose links were filled as before).
    pub origins_digest: Option<crate::index::Hash>,
    /// The [`fill_key`] of an item with links, when it was looked up in
    /// a store (which keeps its filled inputs under it).
    pub(crate) fill_key: Option<crate::index::Hash>,
}

/// Why an item produced no results.
#[derive(Debug, Clone, PartialEq)]
pub struct ItemFailure {
    /// The item id.
    pub item: String,
    /// Its file.
    pub file: String,
    /// The module's error (or the engine's, for a bad outcome).
    pub error: CalcError,
}

/// The outcome of a run.
#[derive(Debug, Clone, Default)]
pub struct RunOutcome {
    /// Computed items by id.
    pub items: BTreeMap<String, ItemRun>,
    /// Items that failed, by id.
    pub failures: Vec<ItemFailure>,
    /// Items skipped because an item they link to failed.
    pub skipped: Vec<String>,
    /// How many items were computed (not taken from the cache).
    pub computed: usize,
}

/// A store of earlier outcomes keyed by digest (see `cache`).
pub trait OutcomeStore: Sync {
    /// An earlier outcome for this digest, if any.
    fn get(&self, digest: &str) -> Option<SharedOutcome>;

    /// The inputs of `item` (which has links) as filled before under this
    /// [`fill_key`], if the store keeps them.
    fn filled(&self, item: &PlannedItem, key: &crate::index::Hash) -> Option<Filled> {
        let _ = (item, key);
        None
    }
}

/// An item's inputs with its links filled, and what is digested of them.
pub struct Filled {
    /// The inputs, links filled.
    pub inputs: Deferred<Inputs>,
    /// Their digest ([`digest`]).
    pub digest: String,
    /// The digest of their names and origins
    /// ([`crate::index::origins_digest`]).
    pub origins: crate::index::Hash,
}

/// The value each link of `item` takes from the items run so far, as the
/// bits of its SI value and its dimension; `None` when a source has not
/// run or lacks the output.
pub fn link_values(
    item: &PlannedItem,
    done: &BTreeMap<String, ItemRun>,
) -> Option<Vec<(u64, packwright_api::Dimension)>> {
    item.links
        .iter()
        .map(|link| {
            let m = done.get(&link.item)?.outcome.output(&link.output)?;
            Some((m.value.to_bits(), m.dimension))
        })
        .collect()
}

/// The key under which an item's filled inputs are kept: a digest of all
/// [`fill_links`] makes them from (the item's resolved inputs in their
/// stored form, its links and their values) and of the module the digest
/// names. An item with links takes its filled inputs and their digests
/// from the store under this key rather than decoding, copying and
/// digesting its inputs again: most items with links in a rerun link to
/// items that did not change.
pub fn fill_key(
    item: &PlannedItem,
    values: &[(u64, packwright_api::Dimension)],
    decl: &ModuleDeclaration,
    fingerprint: Option<&str>,
) -> crate::index::Hash {
    let mut h = Sha256::new();
    let mut field = |bytes: &[u8]| {
        h.update((bytes.len() as u64).to_le_bytes());
        h.update(bytes);
    };
    field(b"packwright fill 1");
    field(TOOL_VERSION.as_bytes());
    field(decl.name.as_bytes());
    field(decl.version.as_bytes());
    field(fingerprint.unwrap_or("-").as_bytes());
    field(item.file.as_bytes());
    // The stored form leaves out the item's own file's name in spans, as
    // in the item index, whose bytes it then is.
    packwright_api::with_span_file(Some(item.file.clone()), || {
        field(&item.inputs.stored_form());
    });
    field(&postcard::to_allocvec(&item.links).unwrap_or_default());
    field(&postcard::to_allocvec(values).unwrap_or_default());
    h.finalize().into()
}

pub use crate::deferred::Encoded;

/// An item's outcome. One computed in this run is held as it is; one taken
/// from the rerun cache is decoded when first looked at (see
/// [`Deferred`]): a rerun looks at few of them (the sources of links and
/// the items whose result files are written). Its [`Glance`] is stored
/// apart too, because a link source's outputs enter the digests of the
/// items linking to it, the results table shows every item's key output
/// and checks, and the rest (series, plots, explanations) is the bulk.
#[derive(Clone)]
pub struct SharedOutcome {
    full: Deferred<Outcome>,
    /// The glance alone, in its stored form, for an outcome taken from the
    /// cache: read in place for each look ([`GlanceView`]), which costs
    /// less than making its map of owned names once.
    glance: Option<(Encoded, Range<usize>)>,
}

/// A [`Glance`] read in place from its stored form: the same bytes (a
/// map is stored as a sequence of pairs), names borrowed (the outputs'
/// as bytes, compared with a name looked for rather than checked as
/// text, for each look).
#[derive(serde::Deserialize)]
struct GlanceView<'a> {
    #[serde(borrow)]
    outputs: Vec<(&'a [u8], Measure)>,
    #[serde(borrow)]
    checks: Vec<(&'a str, packwright_api::Status)>,
}

/// The outputs of an outcome and the name and status of each of its
/// checks: what is looked at of most outcomes.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Glance {
    /// The outputs.
    pub outputs: BTreeMap<String, Measure>,
    /// Each check's name and status, in the outcome's order.
    pub checks: Vec<(String, packwright_api::Status)>,
}

impl Glance {
    /// The stored form of an outcome's glance, written without copying
    /// the outcome (the same bytes as a [`Glance`]'s).
    pub fn encode_of(outcome: &Outcome) -> Result<Vec<u8>, postcard::Error> {
        #[derive(serde::Serialize)]
        struct Borrowed<'a> {
            outputs: &'a BTreeMap<String, Measure>,
            checks: Vec<(&'a str, packwright_api::Status)>,
        }
        postcard::to_allocvec(&Borrowed {
            outputs: &outcome.outputs,
            checks: outcome
                .checks
                .iter()
                .map(|c| (c.name.as_str(), c.status))
                .collect(),
        })
    }
}

impl SharedOutcome {
    /// An outcome taken from encoded bytes: `glance` holds its [`Glance`]
    /// and `full` the whole outcome, both in postcard's form.
    pub fn encoded(bytes: Encoded, glance: Range<usize>, full: Range<usize>) -> SharedOutcome {
        SharedOutcome {
            full: Deferred::in_bytes(bytes.clone(), full),
            glance: Some((bytes, glance)),
        }
    }

    /// The glance read in place, unless the whole outcome is at hand (or
    /// the glance does not read, when the whole outcome answers).
    fn glance(&self) -> Option<GlanceView<'_>> {
        let (bytes, range) = self.glance.as_ref().filter(|_| !self.full.is_decoded())?;
        postcard::from_bytes(&bytes[range.clone()]).ok()
    }

    /// One output, without decoding the rest of the outcome.
    pub fn output(&self, name: &str) -> Option<Measure> {
        match self.glance() {
            Some(glance) => glance
                .outputs
                .iter()
                .find(|(n, _)| *n == name.as_bytes())
                .map(|(_, m)| *m),
            None => self.full.outputs.get(name).copied(),
        }
    }

    /// Each check's name and status, without decoding the rest of the
    /// outcome.
    pub fn check_statuses(&self) -> Vec<(&str, packwright_api::Status)> {
        match self.glance() {
            Some(glance) => glance.checks,
            None => self
                .full
                .checks
                .iter()
                .map(|c| (c.name.as_str(), c.status))
                .collect(),
        }
    }
}

crate::deferred::stored_as_postcard!(Outcome);

impl From<Outcome> for SharedOutcome {
    fn from(outcome: Outcome) -> SharedOutcome {
        SharedOutcome {
            full: Deferred::new(outcome),
            glance: None,
        }
    }
}

impl std::ops::Deref for SharedOutcome {
    type Target = Outcome;

    fn deref(&self) -> &Outcome {
        &self.full
    }
}

impl std::fmt::Debug for SharedOutcome {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        std::fmt::Debug::fmt(&**self, f)
    }
}

/// The tool's version, which enters every digest.
pub const TOOL_VERSION: &str = env!("CARGO_PKG_VERSION");

/// A canonical text of resolved inputs, for digests. Written into one
/// buffer: a rerun digests every item, and a `format!` per value was a
/// visible part of it. The text is unchanged, and so is every digest.
fn canonical_inputs(inputs: &Inputs) -> String {
    use std::fmt::Write as _;
    let mut text = String::with_capacity(64 * (inputs.values.len() + inputs.criteria.len()));
    let value_text = |text: &mut String, v: &Value| {
        let _ = match v {
            // `{:?}` of f64 is the shortest text that reads back to the same bits.
            Value::Quantity { value, dimension } => write!(text, "q:{value:?}:{dimension}"),
            Value::Number(x) => write!(text, "n:{x:?}"),
            Value::Count(n) => write!(text, "c:{n}"),
            Value::Choice(s) => write!(text, "w:{s:?}"),
            Value::Flag(b) => write!(text, "f:{b}"),
            Value::Material(s) => write!(text, "m:{s:?}"),
            Value::Structured(node) => write!(text, "s:{:?}", structured_text(node)),
        };
    };
    for (name, input) in &inputs.values {
        let _ = write!(text, "input {name} = ");
        value_text(&mut text, &input.value);
        text.push('\n');
    }
    for (name, v) in &inputs.criteria {
        let _ = write!(text, "criterion {name} = ");
        value_text(&mut text, v);
        text.push('\n');
    }
    text
}

/// A structured value without positions: moving a chute path down a line
/// in its file does not change the calculation.
pub fn structured_text(node: &packwright_api::Node) -> String {
    use packwright_api::NodeValue as V;
    match &node.value {
        V::Null => "~".into(),
        V::Bool(b) => format!("{b}"),
        V::Number(x) => format!("{x:?}"),
        V::Text(s) => format!("{s:?}"),
        V::List(items) => format!(
            "[{}]",
            items
                .iter()
                .map(structured_text)
                .collect::<Vec<_>>()
                .join(",")
        ),
        V::Map(entries) => format!(
            "{{{}}}",
            entries
                .iter()
                .map(|(k, v)| format!("{}:{}", structured_text(k), structured_text(v)))
                .collect::<Vec<_>>()
                .join(",")
        ),
    }
}

/// The digest of an item's resolved inputs together with the module's name,
/// version and fingerprint and the tool's version: the cache key.
pub fn digest(inputs: &Inputs, decl: &ModuleDeclaration, fingerprint: Option<&str>) -> String {
    let mut h = Sha256::new();
    h.update(format!(
        "packwright {TOOL_VERSION}\nmodule {} {}\nfingerprint {}\n",
        decl.name,
        decl.version,
        fingerprint.unwrap_or("-")
    ));
    h.update(canonical_inputs(inputs));
    let bytes = h.finalize();
    let mut text = String::with_capacity(7 + 64);
    text.push_str("sha256:");
    crate::fast::push_hex(&mut text, &bytes);
    text
}

/// Checks an outcome against the declaration: every required output there,
/// nothing undeclared, dimensions right, every number finite.
pub fn verify_outcome(
    outcome: &Outcome,
    decl: &ModuleDeclaration,
    inputs: &Inputs,
) -> Result<(), CalcError> {
    let driven_by: Vec<String> = inputs.values.keys().cloned().collect();
    let numerical = |what: String, message: &str| CalcError::Numerical {
        quantity: what,
        message: message.into(),
        inputs: driven_by.clone(),
    };
    for (name, m) in &outcome.outputs {
        let Some(spec) = decl.output(name) else {
            return Err(CalcError::contract(format!(
                "module `{}` returned `{name}`, which it does not declare",
                decl.name
            )));
        };
        if spec.dimension != m.dimension {
            return Err(CalcError::contract(format!(
                "output `{name}` should be {} but the module returned {}",
                spec.dimension.describe(),
                m.dimension.describe()
            )));
        }
        if !m.value.is_finite() {
            return Err(numerical(
                format!("output `{name}`"),
                &format!("the calculation gave {} (not a finite number)", m.value),
            ));
        }
    }
    for spec in &decl.outputs {
        if !spec.optional && !outcome.outputs.contains_key(&spec.name) {
            return Err(CalcError::contract(format!(
                "module `{}` did not return its output `{}`",
                decl.name, spec.name
            )));
        }
    }
    for check in &outcome.checks {
        if !decl.checks.iter().any(|c| c.name == check.name) {
            return Err(CalcError::contract(format!(
                "module `{}` reported check `{}`, which it does not declare",
                decl.name, check.name
            )));
        }
        for m in [check.value, check.limit].into_iter().flatten() {
            if !m.value.is_finite() {
                return Err(numerical(
                    format!("check `{}`", check.name),
                    "the check's value or limit is not a finite number",
                ));
            }
        }
    }
    for series in &outcome.series {
        if series.rows.iter().flatten().any(|x| !x.is_finite()) {
            return Err(numerical(
                format!("series `{}`", series.name),
                "the series holds a value that is not a finite number",
            ));
        }
        if series.rows.iter().any(|r| r.len() != series.columns.len()) {
            return Err(CalcError::contract(format!(
                "series `{}` has rows of the wrong length",
                series.name
            )));
        }
    }
    for plot in &outcome.plots {
        let bad = plot
            .layers
            .iter()
            .flat_map(|l| &l.points)
            .any(|(x, y)| !x.is_finite() || !y.is_finite());
        if bad {
            return Err(numerical(
                format!("plot `{}`", plot.id),
                "the plot holds a point that is not a finite number",
            ));
        }
    }
    Ok(())
}

/// The item's resolved inputs with each link's value (see [`link_values`]).
fn fill_links(item: &PlannedItem, values: &[(u64, packwright_api::Dimension)]) -> Deferred<Inputs> {
    let mut inputs = item.inputs.clone();
    for (link, &(bits, dimension)) in item.links.iter().zip(values) {
        let value = Value::from_si(f64::from_bits(bits), dimension);
        inputs.make_mut().values.insert(
            link.input.clone(),
            ResolvedInput {
                value,
                origin: Origin::Link {
                    item: link.item.clone(),
                    output: link.output.clone(),
                    span: link.span.clone(),
                },
                written: link.written.clone(),
            },
        );
    }
    inputs
}

/// Runs every item of the plan, level by level, items of a level in
/// parallel. An item whose linked item failed is skipped. `store`, when
/// given, supplies earlier outcomes for unchanged digests.
pub fn run(plan: &Plan, registry: &Registry, store: Option<&dyn OutcomeStore>) -> RunOutcome {
    run_with_progress(plan, registry, store, None)
}

/// [`run`], calling `progress` with each item's id as it finishes (for a
/// progress bar; called from worker threads).
pub fn run_with_progress(
    plan: &Plan,
    registry: &Registry,
    store: Option<&dyn OutcomeStore>,
    progress: Option<&(dyn Fn(&str) + Sync)>,
) -> RunOutcome {
    let mut result = RunOutcome::default();
    for level in &plan.levels {
        let done = Mutex::new(Vec::new());
        let failures = Mutex::new(Vec::new());
        let skipped = Mutex::new(Vec::new());
        level.par_iter().for_each(|id| {
            let item = &plan.items[id];
            let _tick = Tick(progress, id);
            let Some(values) = link_values(item, &result.items) else {
                skipped.lock().expect("not poisoned").push(id.clone());
                return;
            };
            let registered = registry
                .get(&item.module)
                .expect("planned items have modules");
            let decl = &registered.declaration;
            let fingerprint = registered.fingerprint.as_deref();
            let fill_key = store
                .filter(|_| item.own_digests.is_none())
                .map(|_| fill_key(item, &values, decl, fingerprint));
            let filled = store
                .zip(fill_key.as_ref())
                .and_then(|(s, k)| s.filled(item, k));
            let (inputs, digest, origins_digest) = match (&item.own_digests, filled) {
                (Some(own), _) => (item.inputs.clone(), own.inputs.clone(), None),
                (None, Some(f)) => (f.inputs, f.digest, Some(f.origins)),
                (None, None) => {
                    let inputs = fill_links(item, &values);
                    let digest = digest(&inputs, decl, fingerprint);
                    (inputs, digest, None)
                }
            };
            let cached = store.and_then(|s| s.get(&digest));
            let from_cache = cached.is_some();
            let outcome = match cached {
                Some(o) => Ok(o),
                None => compute_guarded(registered.module.as_ref(), &inputs)
                    .and_then(|o| verify_outcome(&o, decl, &inputs).map(|_| o.into())),
            };
            match outcome {
                Ok(outcome) => done.lock().expect("not poisoned").push(ItemRun {
                    item: Arc::clone(item),
                    inputs,
                    module_version: decl.version.clone(),
                    inputs_digest: digest,
                    outcome,
                    from_cache,
                    origins_digest,
                    fill_key,
                }),
                Err(error) => failures.lock().expect("not poisoned").push(ItemFailure {
                    item: id.clone(),
                    file: item.file.to_string(),
                    error,
                }),
            }
        });
        for run in done.into_inner().expect("not poisoned") {
            if !run.from_cache {
                result.computed += 1;
            }
            result.items.insert(run.item.id.clone(), run);
        }
        result
            .failures
            .extend(failures.into_inner().expect("not poisoned"));
        result
            .skipped
            .extend(skipped.into_inner().expect("not poisoned"));
    }
    result.failures.sort_by(|a, b| a.item.cmp(&b.item));
    result.skipped.sort();
    result
}

/// Reports an item as finished when dropped, whichever way it finished.
struct Tick<'a>(Option<&'a (dyn Fn(&str) + Sync)>, &'a str);

impl Drop for Tick<'_> {
    fn drop(&mut self) {
        if let Some(progress) = self.0 {
            progress(self.1);
        }
    }
}

/// Computes one item, turning a panic inside a module into a contract error
/// so that one bad module cannot take the run down.
fn compute_guarded(module: &dyn Module, inputs: &Inputs) -> Result<Outcome, CalcError> {
    std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| module.compute(inputs)))
        .unwrap_or_else(|panic| {
            let what = panic
                .downcast_ref::<&str>()
                .map(|s| s.to_string())
                .or_else(|| panic.downcast_ref::<String>().cloned())
                .unwrap_or_else(|| "unknown".into());
            Err(CalcError::contract(format!(
                "the module stopped unexpectedly: {what}"
            )))
        })
}

#[cfg(test)]
#[path = "run_tests.rs"]
mod tests;
