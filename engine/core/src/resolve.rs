//! Validation and linking: every item's inputs checked against its module's
//! declaration (known keys, units of the right dimension, ranges, required
//! inputs), materials and defaults filled in, links to other items' outputs
//! checked, and the items put in dependency order.
//!
//! Owns no state: a [`Plan`] is a value built from a project and a registry.

use std::collections::{BTreeMap, BTreeSet};

use packwright_api::{
    parse_scalar, CalcError, InputKind, InputSpec, Inputs, ModuleDeclaration, Need, Node,
    NodeValue, Origin, ResolvedInput, Span, Value,
};

use rayon::prelude::*;

use crate::deferred::Deferred;
use crate::diagnostic::{Diagnostic, Diagnostics};
use crate::fast::HashMap;
use crate::project::{did_you_mean, ItemFile, Project};
use crate::registry::Registry;

/// An input that takes another item's output.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Link {
    /// The input that receives the value.
    pub input: String,
    /// The item that gives it.
    pub item: String,
    /// The output it gives.
    pub output: String,
    /// Where `from:` stands.
    pub span: Span,
    /// The text as written (`TC-02.exit_speed`).
    pub written: String,
}

/// An item ready to run: everything resolved but its links' values.
#[derive(Debug, Clone, serde::Serialize, serde::Deserialize)]
pub struct PlannedItem {
    /// The item id.
    pub id: String,
    /// The module name.
    pub module: String,
    /// The title.
    pub title: String,
    /// Free text.
    pub notes: Option<String>,
    /// The file.
    pub file: std::sync::Arc<str>,
    /// Resolved inputs and criteria (links not yet filled); shared with
    /// the run of an item without links rather than copied, and, for an
    /// item taken from the item index, decoded when first looked at.
    pub inputs: Deferred<Inputs>,
    /// Links to fill before computing.
    pub links: Vec<Link>,
    /// The material used, if any: (input name, material id).
    pub materials: Vec<(String, String)>,
    /// For an item without links, its digests, which then depend on its
    /// file, module and materials alone.
    pub own_digests: Option<OwnDigests>,
}

/// The digests of an item without links, taken when it is resolved and
/// kept in the item index with it, so that a rerun keys the item's cache
/// entry and result file without decoding its inputs.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct OwnDigests {
    /// The inputs digest (see [`crate::run::digest`]).
    pub inputs: String,
    /// The digest of the inputs' names and origins (see
    /// [`crate::index::origins_digest`]).
    pub origins: crate::index::Hash,
}

/// The items in an order where every item comes after those it links to,
/// grouped into levels that may run in parallel.
#[derive(Debug, Clone)]
pub struct Plan {
    /// Items by id (shared with the runs made from them).
    pub items: BTreeMap<String, std::sync::Arc<PlannedItem>>,
    /// Levels of item ids; each level depends only on earlier levels.
    pub levels: Vec<Vec<String>>,
}

impl Plan {
    /// Every item id in run order.
    pub fn order(&self) -> impl Iterator<Item = &String> {
        self.levels.iter().flatten()
    }
}

fn diag_from_calc(err: CalcError, item: &ItemFile) -> Diagnostic {
    match err {
        CalcError::Input {
            input,
            span,
            message,
            expected,
        } => Diagnostic::new(
            Some(span.unwrap_or_else(|| item.written.inputs_span.clone())),
            format!("item `{}`, input `{input}`: {message}", item.id),
        )
        .expected(expected),
        other => Diagnostic::new(
            Some(item.id_span.clone()),
            format!("item `{}`: {other}", item.id),
        ),
    }
}

/// Largest magnitude, in SI coherent units, that an input may have. No
/// quantity in bulk handling or lifting comes near it (a rope modulus is
/// about 1e11 Pa), and squares and products of values below it stay far
/// from overflowing a double.
pub const MAX_INPUT_MAGNITUDE: f64 = 1e15;

/// Reads one written value for an input of the given spec, refusing
/// magnitudes no real plant has.
fn read_value(spec: &InputSpec, node: &Node) -> Result<Value, String> {
    let value = read_value_unchecked(spec, node)?;
    let magnitude = match &value {
        Value::Quantity { value, .. } | Value::Number(value) => value.abs(),
        Value::Count(n) => *n as f64,
        _ => 0.0,
    };
    if magnitude > MAX_INPUT_MAGNITUDE {
        return Err(format!(
            "`{}` is {magnitude:e} in SI units, beyond any physical value packwright calculates with (at most {MAX_INPUT_MAGNITUDE:e})",
            written_text(node)
        ));
    }
    Ok(value)
}

fn read_value_unchecked(spec: &InputSpec, node: &Node) -> Result<Value, String> {
    if let InputKind::Structured { .. } = spec.kind {
        return Ok(Value::Structured(node.clone()));
    }
    match &node.value {
        NodeValue::Text(text) => parse_scalar(spec, text),
        NodeValue::Number(x) => match &spec.kind {
            InputKind::Quantity { dimension } => Err(format!(
                "`{x}` has no unit; `{}` takes {} with a unit, for example `{}`",
                spec.name,
                dimension.describe(),
                dimension.example()
            )),
            _ if !x.is_finite() => Err(format!("`{x}` is not a finite number")),
            _ => parse_scalar(spec, &format!("{x}")),
        },
        NodeValue::Bool(b) => match spec.kind {
            InputKind::Flag => Ok(Value::Flag(*b)),
            _ => Err(format!(
                "`{b}` is true/false, but `{}` takes {}",
                spec.name,
                kind_words(spec)
            )),
        },
        _ => Err(format!(
            "`{}` takes {}, not {}",
            spec.name,
            kind_words(spec),
            node.kind_name()
        )),
    }
}

/// What an input takes, in words, with an example.
pub fn kind_words(spec: &InputSpec) -> String {
    match &spec.kind {
        InputKind::Quantity { dimension } => {
            format!(
                "{} with a unit, such as `{}`",
                dimension.describe(),
                dimension.example()
            )
        }
        InputKind::Number => "a plain number, such as `0.6`".into(),
        InputKind::Count => "a whole number, such as `4`".into(),
        InputKind::Choice { options } => format!("one of {}", options.join(", ")),
        InputKind::Flag => "`true` or `false`".into(),
        InputKind::Material { material_kind } => {
            format!("the id of a {material_kind} material in materials/")
        }
        InputKind::Structured { shape } => shape.clone(),
    }
}

fn written_text(node: &Node) -> String {
    match &node.value {
        NodeValue::Text(s) => s.clone(),
        NodeValue::Number(x) => format!("{x}"),
        NodeValue::Bool(b) => format!("{b}"),
        NodeValue::Null => String::new(),
        NodeValue::List(_) | NodeValue::Map(_) => "(structured)".into(),
    }
}

/// A `{ from: ITEM.OUTPUT }` mapping, if the node is one.
fn link_of(node: &Node) -> Option<Result<(String, String, Span, String), Diagnostic>> {
    let entries = node.as_map()?;
    let (key, value) = entries.iter().find(|(k, _)| k.as_text() == Some("from"))?;
    if entries.len() != 1 {
        return Some(Err(Diagnostic::new(
            Some(key.span.clone()),
            "a link has only the key `from`".into(),
        )
        .expected("`{ from: TC-02.exit_speed_along_belt }`")));
    }
    let text = written_text(value);
    match text.split_once('.') {
        Some((item, output)) if !item.is_empty() && !output.is_empty() => Some(Ok((
            item.to_string(),
            output.to_string(),
            value.span.clone(),
            text,
        ))),
        _ => Some(Err(Diagnostic::new(
            Some(value.span.clone()),
            format!("`{text}` is not a link of the form ITEM.OUTPUT"),
        )
        .expected("`{ from: TC-02.exit_speed_along_belt }`"))),
    }
}

/// Resolves one item against its module, all but its links' targets (see
/// [`check_links`]): what depends on the item's file, its module and the
/// materials only, so that the item index can keep it. Returns the planned
/// item and whether it is free of problems (its problems are pushed).
fn resolve_item(
    item: &ItemFile,
    decl: &ModuleDeclaration,
    project: &Project,
    registry: &Registry,
    out: &mut Diagnostics,
) -> (PlannedItem, bool) {
    let before = out.0.len();
    let mut values: BTreeMap<String, ResolvedInput> = BTreeMap::new();
    let mut links = Vec::new();
    let mut materials = Vec::new();
    let names: Vec<&str> = decl.inputs.iter().map(|i| i.name.as_str()).collect();
    // Inputs written with a bad value, and whether a material could not be
    // used: neither is also reported as "missing", which it is not (or may
    // not be, once the material is put right).
    let mut written_bad: BTreeSet<String> = BTreeSet::new();
    let mut material_failed = false;

    for (key, node) in &item.written.inputs {
        let name = key.as_text().unwrap_or_default();
        let Some(spec) = decl.input(name) else {
            let mut d = Diagnostic::new(
                Some(key.span.clone()),
                format!("`{name}` is not an input of module `{}`", decl.name),
            )
            .expected(format!("one of: {}", names.join(", ")));
            if let Some(best) = did_you_mean(name, names.iter().copied()) {
                d.message.push_str(&format!(" (did you mean `{best}`?)"));
            }
            out.push(d);
            continue;
        };
        if let Some(link) = link_of(node) {
            match link {
                Ok((target, output, span, written)) => links.push(Link {
                    input: name.into(),
                    item: target,
                    output,
                    span,
                    written,
                }),
                Err(d) => out.push(d),
            }
            continue;
        }
        if node.value == NodeValue::Null {
            written_bad.insert(name.to_string());
            out.push(
                Diagnostic::new(Some(node.span.clone()), format!("`{name}` has no value"))
                    .expected(format!("`{name}:` followed by {}", kind_words(spec))),
            );
            continue;
        }
        match read_value(spec, node) {
            Ok(value) => {
                if let Value::Material(id) = &value {
                    materials.push((name.to_string(), id.clone()));
                }
                values.insert(
                    name.into(),
                    ResolvedInput {
                        value,
                        origin: Origin::Item {
                            span: node.span.clone(),
                        },
                        written: written_text(node),
                    },
                );
            }
            Err(message) => {
                written_bad.insert(name.to_string());
                out.push(
                    Diagnostic::new(
                        Some(node.span.clone()),
                        format!("item `{}`: {message}", item.id),
                    )
                    .expected(format!("`{name}:` {}", kind_words(spec))),
                )
            }
        }
    }

    // Materials fill what the item left out.
    for (input_name, id) in &materials {
        let spec = decl.input(input_name).expect("material input is declared");
        let InputKind::Material { material_kind } = &spec.kind else {
            continue;
        };
        let span = values[input_name].origin.span().cloned();
        let Some(material) = project.materials.get(id) else {
            let known: Vec<&str> = project
                .materials
                .values()
                .filter(|m| &m.kind == material_kind)
                .map(|m| m.id.as_str())
                .collect();
            let mut d = Diagnostic::new(span, format!("there is no material `{id}` in materials/"))
                .expected(if known.is_empty() {
                    format!("a file in materials/ with `id: {id}` and `kind: {material_kind}`")
                } else {
                    format!("one of: {}", known.join(", "))
                });
            if let Some(best) = did_you_mean(id, known.iter().copied()) {
                d.message.push_str(&format!(" (did you mean `{best}`?)"));
            }
            out.push(d);
            material_failed = true;
            continue;
        };
        if &material.kind != material_kind {
            material_failed = true;
            out.push(
                Diagnostic::new(
                    span,
                    format!("`{id}` is a {} material, but `{input_name}` takes a {material_kind} material", material.kind),
                )
                .related(material.span.clone(), "the material"),
            );
            continue;
        }
        for (prop, node) in &material.properties {
            let Some(spec) = decl.input(prop) else {
                continue;
            };
            if values.contains_key(prop) || links.iter().any(|l| &l.input == prop) {
                continue;
            }
            match read_value(spec, node) {
                Ok(value) => {
                    values.insert(
                        prop.clone(),
                        ResolvedInput {
                            value,
                            origin: Origin::Material {
                                material: id.clone(),
                                span: node.span.clone(),
                            },
                            written: written_text(node),
                        },
                    );
                }
                Err(message) => {
                    written_bad.insert(prop.clone());
                    out.push(
                        Diagnostic::new(
                            Some(node.span.clone()),
                            format!(
                                "material `{id}`, property `{prop}` (used by item `{}`): {message}",
                                item.id
                            ),
                        )
                        .expected(format!("`{prop}:` {}", kind_words(spec))),
                    )
                }
            }
        }
    }

    // Defaults, and what is still missing.
    for spec in &decl.inputs {
        if values.contains_key(&spec.name) || links.iter().any(|l| l.input == spec.name) {
            continue;
        }
        match &spec.need {
            Need::Default(text) => match parse_scalar(spec, text) {
                Ok(value) => {
                    values.insert(
                        spec.name.clone(),
                        ResolvedInput {
                            value,
                            origin: Origin::Default,
                            written: text.clone(),
                        },
                    );
                }
                Err(message) => out.push(Diagnostic::new(
                    None,
                    format!("module `{}` has a bad default: {message}", decl.name),
                )),
            },
            Need::Optional => {}
            Need::Required if written_bad.contains(&spec.name) || material_failed => {}
            Need::Required => out.push(
                Diagnostic::new(
                    Some(item.written.inputs_span.clone()),
                    format!(
                        "item `{}` lacks the required input `{}` ({})",
                        item.id, spec.name, spec.meaning
                    ),
                )
                .expected(format!(
                    "`{}:` {} under `inputs:`",
                    spec.name,
                    kind_words(spec)
                )),
            ),
        }
    }

    // Criteria overrides and defaults.
    let mut criteria = BTreeMap::new();
    let criterion_names: Vec<&str> = decl.criteria.iter().map(|c| c.name.as_str()).collect();
    for (key, node) in &item.written.criteria {
        let name = key.as_text().unwrap_or_default();
        let Some(c) = decl.criterion(name) else {
            let mut d = Diagnostic::new(
                Some(key.span.clone()),
                format!("`{name}` is not a criterion of module `{}`", decl.name),
            )
            .expected(if criterion_names.is_empty() {
                "no `criteria:` (this module has none)".to_string()
            } else {
                format!("one of: {}", criterion_names.join(", "))
            });
            if let Some(best) = did_you_mean(name, criterion_names.iter().copied()) {
                d.message.push_str(&format!(" (did you mean `{best}`?)"));
            }
            out.push(d);
            continue;
        };
        let spec = InputSpec::quantity(&c.name, c.dimension, &c.meaning);
        let spec = if c.dimension == packwright_api::Dimension::Dimensionless {
            InputSpec {
                kind: InputKind::Number,
                ..spec
            }
        } else {
            spec
        };
        match read_value(&spec, node) {
            Ok(v) => {
                criteria.insert(c.name.clone(), v);
            }
            Err(message) => out.push(
                Diagnostic::new(
                    Some(node.span.clone()),
                    format!("item `{}`, criterion: {message}", item.id),
                )
                .expected(format!("`{}:` {}", c.name, kind_words(&spec))),
            ),
        }
    }
    for c in &decl.criteria {
        if criteria.contains_key(&c.name) {
            continue;
        }
        if let Some(text) = &c.default {
            if let Ok(q) = packwright_api::units::parse_expecting(text, c.dimension) {
                criteria.insert(c.name.clone(), Value::from_si(q.value_si, q.dimension));
            }
        }
    }

    let inputs = Inputs {
        item: item.id.clone(),
        values,
        criteria,
    };
    // Linked values are not known yet: such items are validated as they run.
    if out.0.len() == before && links.is_empty() {
        let module = &registry.get(&decl.name).expect("registered").module;
        for e in module.check_inputs(&inputs) {
            out.push(diag_from_calc(e, item));
        }
    }
    let own_digests = links.is_empty().then(|| OwnDigests {
        inputs: crate::run::digest(
            &inputs,
            decl,
            registry
                .get(&decl.name)
                .and_then(|r| r.fingerprint.as_deref()),
        ),
        origins: crate::index::origins_digest(&inputs),
    });
    let planned = PlannedItem {
        id: item.id.clone(),
        module: decl.name.clone(),
        title: item.title.clone(),
        notes: item.notes.clone(),
        file: item.file.clone(),
        inputs: inputs.into(),
        links,
        materials,
        own_digests,
    };
    (planned, out.0.len() == before)
}

/// Checks an item's links against the items they name: the target exists,
/// has the output, the dimensions agree, and it is not the item itself.
fn check_links(
    item: &ItemFile,
    links: &[Link],
    decl: &ModuleDeclaration,
    project: &Project,
    by_id: &HashMap<&str, &ItemFile>,
    registry: &Registry,
    out: &mut Diagnostics,
) {
    for link in links {
        let spec = decl.input(&link.input).expect("link input is declared");
        let Some(&target) = by_id.get(link.item.as_str()) else {
            let ids: Vec<&str> = project.items.iter().map(|i| i.id.as_str()).collect();
            let mut d = Diagnostic::new(
                Some(link.span.clone()),
                format!(
                    "item `{}` links to `{}`, but there is no item `{}`",
                    item.id, link.written, link.item
                ),
            )
            .expected("`{ from: ITEM.OUTPUT }` naming an item id in this project");
            if let Some(best) = did_you_mean(&link.item, ids.iter().copied()) {
                d.message.push_str(&format!(" (did you mean `{best}`?)"));
            }
            out.push(d);
            continue;
        };
        let Some(target_decl) = registry.get(&target.module).map(|r| &r.declaration) else {
            continue; // the target's own unknown module is reported on its own
        };
        let Some(output) = target_decl.output(&link.output) else {
            let outs: Vec<&str> = target_decl
                .outputs
                .iter()
                .map(|o| o.name.as_str())
                .collect();
            let mut d = Diagnostic::new(
                Some(link.span.clone()),
                format!(
                    "item `{}` (module `{}`) has no output `{}`",
                    link.item, target.module, link.output
                ),
            )
            .related(target.id_span.clone(), "the linked item")
            .expected(format!("one of: {}", outs.join(", ")));
            if let Some(best) = did_you_mean(&link.output, outs.iter().copied()) {
                d.message.push_str(&format!(" (did you mean `{best}`?)"));
            }
            out.push(d);
            continue;
        };
        match spec.kind.dimension() {
            Some(dim) if dim == output.dimension => {}
            _ => out.push(
                Diagnostic::new(
                    Some(link.span.clone()),
                    format!(
                        "`{}` is {}, but input `{}` takes {}",
                        link.written,
                        output.dimension.describe(),
                        link.input,
                        kind_words(spec)
                    ),
                )
                .related(target.id_span.clone(), "the linked item")
                .expected(match spec.kind.dimension() {
                    Some(dim) => format!("a link to an output that is {}", dim.describe()),
                    None => format!("`{}:` {}, written out", link.input, kind_words(spec)),
                }),
            ),
        }
        if link.item == item.id {
            out.push(
                Diagnostic::new(
                    Some(link.span.clone()),
                    format!("item `{}` links to itself", item.id),
                )
                .expected("a link to another item's output"),
            );
        }
    }
}

/// Validates and links every item. Returns the plan when there is no
/// problem at all, otherwise every problem found.
pub fn plan(project: &Project, registry: &Registry) -> Result<Plan, Diagnostics> {
    plan_reusing(project, registry, HashMap::default())
}

/// [`plan`], taking the resolved form of the items in `reused` (by file)
/// as it is instead of resolving them again; their links are checked all
/// the same. The caller vouches that each was resolved from the same item
/// file under the same modules and materials (see [`crate::item_index`]).
pub fn plan_reusing(
    project: &Project,
    registry: &Registry,
    mut reused: HashMap<std::sync::Arc<str>, PlannedItem>,
) -> Result<Plan, Diagnostics> {
    let mut out = Diagnostics::default();
    let known: Vec<&str> = registry.names().collect();
    let by_id: HashMap<&str, &ItemFile> =
        project.items.iter().map(|i| (i.id.as_str(), i)).collect();
    let earlier: Vec<Option<PlannedItem>> = project
        .items
        .iter()
        .map(|item| reused.remove(&item.file))
        .collect();
    // Items resolve independently, so in parallel; their problems are
    // gathered in item order.
    let resolved: Vec<(Option<PlannedItem>, Diagnostics)> = project
        .items
        .par_iter()
        .zip(earlier)
        .map(|(item, earlier)| {
            let mut out = Diagnostics::default();
            let Some(registered) = registry.get(&item.module) else {
                let mut d = Diagnostic::new(
                    Some(item.module_span.clone()),
                    format!(
                        "item `{}` names module `{}`, which packwright does not have",
                        item.id, item.module
                    ),
                )
                .expected(format!(
                    "one of: {} (see `packwright modules`)",
                    known.join(", ")
                ));
                if let Some(best) = did_you_mean(&item.module, known.iter().copied()) {
                    d.message.push_str(&format!(" (did you mean `{best}`?)"));
                }
                out.push(d);
                return (None, out);
            };
            let decl = &registered.declaration;
            let (planned, ok) = match earlier {
                Some(planned) if planned.module == decl.name => (planned, true),
                _ => resolve_item(item, decl, project, registry, &mut out),
            };
            let before = out.0.len();
            check_links(
                item,
                &planned.links,
                decl,
                project,
                &by_id,
                registry,
                &mut out,
            );
            let ok = ok && out.0.len() == before;
            (ok.then_some(planned), out)
        })
        .collect();
    // In id order (the items are), so the map is built in one pass.
    let mut in_order = Vec::with_capacity(resolved.len());
    for (planned, problems) in resolved {
        out.0.extend(problems.0);
        if let Some(planned) = planned {
            in_order.push((planned.id.clone(), std::sync::Arc::new(planned)));
        }
    }
    let items: BTreeMap<String, std::sync::Arc<PlannedItem>> = in_order.into_iter().collect();
    let levels = order(project, &items, &mut out);
    if out.is_empty() {
        Ok(Plan { items, levels })
    } else {
        out.sort();
        Err(out)
    }
}

/// Orders items by their links (ties broken by id) into levels; a cycle is
/// reported with every item on it. The links of a resolved item are taken
/// from `planned`, so that the inputs as written of an item taken from the
/// item index are not decoded; an item that failed to resolve is read.
fn order(
    project: &Project,
    planned: &BTreeMap<String, std::sync::Arc<PlannedItem>>,
    out: &mut Diagnostics,
) -> Vec<Vec<String>> {
    // Items by number, in id order; each level is taken in that order. A
    // level is the items whose last link source is in the level before
    // (Kahn's method, level by level): looking for them among all items
    // anew for every level, in maps of names, was a visible part of a
    // rerun of a thousand items.
    let mut ids: Vec<&str> = project.items.iter().map(|i| i.id.as_str()).collect();
    ids.sort_unstable();
    ids.dedup();
    let number: crate::fast::HashMap<&str, usize> =
        ids.iter().enumerate().map(|(n, id)| (*id, n)).collect();
    let mut deps: Vec<Vec<usize>> = vec![Vec::new(); ids.len()];
    for item in &project.items {
        let me = number[item.id.as_str()];
        let mut depend_on = |target: &str| {
            if let Some(&t) = number.get(target) {
                if t != me {
                    deps[me].push(t);
                }
            }
        };
        match planned.get(&item.id) {
            Some(p) => p.links.iter().for_each(|l| depend_on(&l.item)),
            None => {
                for (_, node) in &item.written.inputs {
                    if let Some(Ok((target, _, _, _))) = link_of(node) {
                        depend_on(&target);
                    }
                }
            }
        }
    }
    let mut dependants: Vec<Vec<usize>> = vec![Vec::new(); ids.len()];
    let mut waiting: Vec<usize> = vec![0; ids.len()];
    for (n, d) in deps.iter_mut().enumerate() {
        d.sort_unstable();
        d.dedup();
        waiting[n] = d.len();
        d.iter().for_each(|&t| dependants[t].push(n));
    }
    let mut placed = vec![false; ids.len()];
    let mut level: Vec<usize> = (0..ids.len()).filter(|&n| waiting[n] == 0).collect();
    let mut levels = Vec::new();
    while !level.is_empty() {
        let mut next = Vec::new();
        for &n in &level {
            placed[n] = true;
            for &d in &dependants[n] {
                waiting[d] -= 1;
                if waiting[d] == 0 {
                    next.push(d);
                }
            }
        }
        next.sort_unstable();
        levels.push(level.iter().map(|&n| ids[n].to_string()).collect());
        level = next;
    }
    if placed.contains(&false) {
        let by_name = |n: &usize| ids[*n];
        let deps: BTreeMap<&str, BTreeSet<&str>> = deps
            .iter()
            .enumerate()
            .map(|(n, d)| (ids[n], d.iter().map(by_name).collect()))
            .collect();
        let done: BTreeSet<&str> = (0..ids.len())
            .filter(|&n| placed[n])
            .map(|n| ids[n])
            .collect();
        report_cycle(project, &deps, &done, out);
    }
    levels
}

fn report_cycle(
    project: &Project,
    deps: &BTreeMap<&str, BTreeSet<&str>>,
    done: &BTreeSet<&str>,
    out: &mut Diagnostics,
) {
    // Walk from the first stuck item along unfinished links until an item
    // repeats: the part from its first visit on is a cycle.
    let start = deps
        .keys()
        .find(|id| !done.contains(*id))
        .expect("a stuck item");
    let mut path: Vec<&str> = vec![start];
    loop {
        let last = *path.last().expect("non-empty");
        let next = deps[last]
            .iter()
            .find(|d| !done.contains(*d))
            .expect("a stuck item has a stuck dependency");
        if let Some(pos) = path.iter().position(|p| p == next) {
            let cycle = &path[pos..];
            let span_of = |id: &str| {
                project
                    .items
                    .iter()
                    .find(|i| i.id == id)
                    .map(|i| i.id_span.clone())
                    .expect("item exists")
            };
            let mut names: Vec<&str> = cycle.to_vec();
            names.push(cycle[0]);
            let mut d = Diagnostic::new(
                Some(span_of(cycle[0])),
                format!(
                    "these items link to each other in a cycle: {}",
                    names.join(" -> ")
                ),
            )
            .expected("links that run one way only; break the cycle by giving one input a value");
            for id in &cycle[1..] {
                d = d.related(span_of(id), format!("`{id}` is on the cycle"));
            }
            out.push(d);
            return;
        }
        path.push(next);
    }
}
