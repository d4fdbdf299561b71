//! The data a package's templates see: the project, its revisions and
//! sign-off, a summary of every item and check, and per item its inputs
//! (with where each came from), method, results, checks, plots,
//! assumptions, cautions and references. Every number is formatted here, in
//! the project's display units, so templates never format numbers.
//!
//! Owns no state: a pure function of the run.

use std::collections::BTreeSet;

use packwright_api::{Origin, Relation, Status, UnitSystem, Value};
use packwright_core::display;
use packwright_core::project::Revision;
use packwright_core::{Project, Registry, RunOutcome};
use serde::Serialize;
use sha2::{Digest, Sha256};

/// One row of the "Changes since revision X" section.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ChangeRow {
    /// Item id.
    pub item: String,
    /// What changed (`input`, `output`, `check`, `item`).
    pub kind: String,
    /// Name of the input, output or check.
    pub name: String,
    /// Old value as text.
    pub old: String,
    /// New value as text.
    pub new: String,
    /// Change in percent, if numeric.
    pub change: String,
}

impl Review {
    /// The package's view of the engine's review state: numbers as text.
    pub fn from_state(state: &packwright_core::issued::ReviewState) -> Review {
        Review {
            changes_since: state.baseline.clone(),
            changes: state
                .changes
                .iter()
                .map(|c| ChangeRow {
                    item: c.item.clone(),
                    kind: c.kind.clone(),
                    name: c.name.clone(),
                    old: breakable(&c.old),
                    new: breakable(&c.new),
                    change: c.percent.map(|p| format!("{p:+.2} %")).unwrap_or_default(),
                })
                .collect(),
            stale: state.stale.clone(),
        }
    }
}

/// Lets a long `(link ITEM.OUTPUT)` note wrap in a narrow table cell, by
/// a zero-width space after its dots and underscores (numbers stay whole).
fn breakable(text: &str) -> String {
    match text.find('(') {
        Some(at) => {
            let (value, note) = text.split_at(at);
            format!(
                "{value}{}",
                note.replace('.', ".\u{200B}").replace('_', "_\u{200B}")
            )
        }
        None => text.to_string(),
    }
}

/// Review information the package shows (from issued revisions).
#[derive(Debug, Clone, Default, Serialize, PartialEq)]
pub struct Review {
    /// The revision the changes are measured from, with its rows.
    pub changes_since: Option<String>,
    /// The rows.
    pub changes: Vec<ChangeRow>,
    /// When set, a banner on every page says the sign-off is stale.
    pub stale: Option<String>,
}

#[derive(Serialize)]
struct InputRow {
    name: String,
    meaning: String,
    value: String,
    source: String,
    link: Option<String>,
}

#[derive(Serialize)]
struct OutputRow {
    name: String,
    meaning: String,
    value: String,
    unit: String,
}

#[derive(Serialize)]
struct CheckRow {
    name: String,
    pass: bool,
    value: String,
    relation: String,
    limit: String,
    explanation: String,
}

#[derive(Serialize)]
struct CriterionRow {
    name: String,
    meaning: String,
    value: String,
    basis: String,
}

#[derive(Serialize)]
struct PlotRef {
    path: String,
    title: String,
}

#[derive(Serialize)]
struct MethodRow {
    text: String,
    equation: Option<String>,
}

/// One line of a method statement's list of inputs, outputs, criteria or
/// checks: a name, what it means and what it takes or gives.
#[derive(Serialize)]
struct TermRow {
    name: String,
    meaning: String,
    /// Unit, default or other short facts; may be empty.
    takes: String,
}

/// What a module does, said once in the package for every item it
/// computes: its method and equations, its inputs and outputs in words,
/// its acceptance criteria, assumptions, cautions and references.
#[derive(Serialize)]
struct MethodStatement {
    module: String,
    version: String,
    origin: String,
    purpose: String,
    label: String,
    title: String,
    /// The ids of the items computed with it, in package order.
    items: Vec<String>,
    columns: MethodColumns,
    method: Vec<MethodRow>,
    inputs: Vec<TermRow>,
    outputs: Vec<TermRow>,
    criteria: Vec<TermRow>,
    checks: Vec<TermRow>,
    assumptions: Vec<String>,
    cautions: Vec<String>,
    references: Vec<String>,
}

/// The widths of the fixed columns of an item's ruled rows (Typst lengths
/// in em, from [`crate::measure`]): inputs, acceptance limits and results
/// share the name and value columns, so the three line up.
#[derive(Serialize)]
struct ItemColumns {
    name: String,
    value: String,
    check: String,
    demand: String,
    limit: String,
}

/// Space after the widest entry of a column, in em.
const COLUMN_GAP: f64 = 1.2;
/// The most a name column takes (about 55 mm at 9 pt): the last column
/// keeps room to wrap in.
const NAME_COLUMN_MOST: f64 = 17.0;
/// The most a value column takes; a longer value wraps inside it.
const VALUE_COLUMN_MOST: f64 = 13.0;

/// A name as a leading column shows it: one wider than the widest name
/// column may break after its underscores, rather than run into the next
/// column (names have no spaces to break at).
fn fitted_name(name: &str) -> String {
    if crate::measure::em_width(name, false) + COLUMN_GAP > NAME_COLUMN_MOST {
        name.replace('_', "_\u{200B}")
    } else {
        name.to_string()
    }
}

impl ItemColumns {
    fn of(
        inputs: &[InputRow],
        criteria: &[CriterionRow],
        outputs: &[OutputRow],
        checks: &[CheckRow],
    ) -> ItemColumns {
        let names = inputs
            .iter()
            .map(|r| r.name.as_str())
            .chain(criteria.iter().map(|r| r.name.as_str()))
            .chain(outputs.iter().map(|r| r.name.as_str()));
        let values = inputs
            .iter()
            .map(|r| r.value.as_str())
            .chain(criteria.iter().map(|r| r.value.as_str()))
            .chain(outputs.iter().map(|r| r.value.as_str()));
        use crate::measure::column;
        ItemColumns {
            // The widest of the three headings the column carries.
            name: column("Acceptance limit", names, COLUMN_GAP, NAME_COLUMN_MOST),
            value: column("Value", values, COLUMN_GAP, VALUE_COLUMN_MOST),
            check: column(
                "Check",
                checks.iter().map(|c| c.name.as_str()),
                COLUMN_GAP,
                NAME_COLUMN_MOST,
            ),
            demand: column(
                "Demand",
                checks.iter().map(|c| c.value.as_str()),
                COLUMN_GAP,
                VALUE_COLUMN_MOST,
            ),
            limit: column(
                "Limit",
                checks.iter().map(|c| c.limit.as_str()),
                COLUMN_GAP,
                VALUE_COLUMN_MOST,
            ),
        }
    }
}

/// The widths of the fixed columns of a method statement's ruled rows: the
/// names of its inputs, outputs, limits and checks, and what an input takes
/// or an output gives (required, a default or a unit).
#[derive(Serialize, Default)]
struct MethodColumns {
    name: String,
    takes: String,
}

impl MethodColumns {
    fn of(statement: &MethodStatement) -> MethodColumns {
        use crate::measure::column;
        let terms = || {
            statement
                .inputs
                .iter()
                .chain(&statement.outputs)
                .chain(&statement.criteria)
                .chain(&statement.checks)
        };
        MethodColumns {
            name: column(
                "Acceptance limit",
                terms().map(|t| t.name.as_str()),
                COLUMN_GAP,
                NAME_COLUMN_MOST,
            ),
            takes: column(
                "Required or default",
                statement
                    .inputs
                    .iter()
                    .chain(&statement.outputs)
                    .map(|t| t.takes.as_str()),
                COLUMN_GAP,
                VALUE_COLUMN_MOST,
            ),
        }
    }
}

#[derive(Serialize)]
struct ItemData {
    /// The item's section number (1 for the first item).
    number: usize,
    /// The label and title of its module's method statement.
    method_label: String,
    method_title: String,
    id: String,
    label: String,
    title: String,
    module: String,
    module_version: String,
    module_origin: String,
    purpose: String,
    file: String,
    notes: Option<String>,
    inputs_digest: String,
    columns: ItemColumns,
    inputs: Vec<InputRow>,
    criteria: Vec<CriterionRow>,
    method: Vec<MethodRow>,
    outputs: Vec<OutputRow>,
    checks: Vec<CheckRow>,
    any_fail: bool,
    plots: Vec<PlotRef>,
    module_notes: Vec<String>,
    assumptions: Vec<String>,
    cautions: Vec<String>,
    references: Vec<String>,
}

/// A line of the contents: a section, where it starts and what it links to.
#[derive(Serialize, Clone, Debug, PartialEq)]
pub struct ContentsRow {
    /// The section number, empty for unnumbered sections.
    pub number: String,
    /// The section's title as printed.
    pub title: String,
    /// The page the section starts on.
    pub page: usize,
    /// The cross-reference target (`label:NAME` or `page:N`).
    pub target: String,
}

#[derive(Serialize)]
struct SummaryRow {
    id: String,
    label: String,
    title: String,
    module: String,
    key: String,
    passed: usize,
    failed: Vec<String>,
    any_fail: bool,
    no_checks: bool,
}

#[derive(Serialize)]
struct ProjectData {
    name: String,
    document: String,
    title: String,
    client: String,
    units: String,
}

/// All the template data, and the plot files the templates refer to.
#[derive(Serialize)]
pub struct PackageData {
    project: ProjectData,
    revision: Revision,
    revisions: Vec<Revision>,
    status: String,
    digest: String,
    review: Review,
    summary: Vec<SummaryRow>,
    item_count: usize,
    check_count: usize,
    failed_count: usize,
    items: Vec<ItemData>,
    /// One method statement per module used, by module name.
    methods: Vec<MethodStatement>,
    references: Vec<String>,
    /// Filled in by the typesetter once the sections' pages are known.
    contents: Vec<ContentsRow>,
    tool_version: String,
    #[serde(skip)]
    item_module: Vec<(String, String)>,
}

impl PackageData {
    /// Item ids with their module names, in package order.
    pub fn item_modules(&self) -> &[(String, String)] {
        &self.item_module
    }

    /// The contents lines of the method statements, their pages not yet
    /// known.
    pub fn method_contents(&self) -> Vec<ContentsRow> {
        self.methods
            .iter()
            .map(|m| ContentsRow {
                number: String::new(),
                title: m.title.clone(),
                page: 0,
                target: format!("label:{}", m.label),
            })
            .collect()
    }

    /// The number of figures (plots) of each item, in package order.
    pub fn figures_per_item(&self) -> Vec<usize> {
        self.items.iter().map(|i| i.plots.len()).collect()
    }

    /// The contents lines of the item sections, their pages not yet known.
    pub fn item_contents(&self) -> Vec<ContentsRow> {
        self.items
            .iter()
            .map(|i| ContentsRow {
                number: i.number.to_string(),
                title: format!("{}: {}", i.id, i.title),
                page: 0,
                target: format!("label:{}", i.label),
            })
            .collect()
    }

    /// The short digest printed in every footer.
    pub fn digest(&self) -> &str {
        &self.digest
    }
}

/// The status words for the cover, from the signatures recorded.
/// packwright never approves anything: it reports what people signed.
fn status_words(rev: &Revision) -> String {
    match (&rev.checked, &rev.approved) {
        (_, Some(a)) => format!(
            "Approval recorded in project.yaml by {} on {}; valid only with the signed original",
            a.name, a.date
        ),
        (Some(c), None) => format!("Checked by {} on {}; not approved", c.name, c.date),
        (None, None) => "Prepared; not checked, not approved".into(),
    }
}

/// A short digest over every item's inputs digest: it changes when any
/// input of any item changes.
pub fn package_digest(outcome: &RunOutcome) -> String {
    let mut h = Sha256::new();
    for run in outcome.items.values() {
        h.update(run.item.id.as_bytes());
        h.update(b"=");
        h.update(run.inputs_digest.as_bytes());
        h.update(b"\n");
    }
    h.finalize()
        .iter()
        .take(6)
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// A Typst label name for a module's method statement.
pub fn method_label_of(module: &str) -> String {
    format!("method-{module}")
}

/// The title of a module's method statement.
fn method_title_of(decl: &packwright_api::ModuleDeclaration) -> String {
    format!("Method statement: {} {}", decl.name, decl.version)
}

/// A module's method steps as the templates see them.
fn method_rows(decl: &packwright_api::ModuleDeclaration) -> Vec<MethodRow> {
    decl.method
        .iter()
        .map(|m| MethodRow {
            text: m.text.clone(),
            equation: m.equation.clone(),
        })
        .collect()
}

/// A module's method statement, from its declaration.
fn method_statement(
    reg: &packwright_core::registry::Registered,
    system: UnitSystem,
) -> MethodStatement {
    let decl = &reg.declaration;
    let unit_of = |spec: &packwright_api::OutputSpec| {
        display::pretty_unit(display::output_unit(spec, system))
    };
    let mut statement = MethodStatement {
        module: decl.name.clone(),
        version: decl.version.clone(),
        origin: origin_words(reg),
        purpose: decl.purpose.clone(),
        label: method_label_of(&decl.name),
        title: method_title_of(decl),
        items: Vec::new(),
        columns: MethodColumns::default(),
        method: method_rows(decl),
        inputs: decl
            .inputs
            .iter()
            .map(|i| TermRow {
                name: fitted_name(&i.name),
                meaning: i.meaning.clone(),
                takes: match &i.need {
                    packwright_api::Need::Required => "required".into(),
                    packwright_api::Need::Optional => "optional".into(),
                    packwright_api::Need::Default(d) => format!("default {d}"),
                },
            })
            .collect(),
        outputs: decl
            .outputs
            .iter()
            .map(|o| TermRow {
                name: fitted_name(&o.name),
                meaning: o.meaning.clone(),
                takes: unit_of(o),
            })
            .collect(),
        criteria: decl
            .criteria
            .iter()
            .map(|c| TermRow {
                name: fitted_name(&c.name),
                meaning: c.meaning.clone(),
                takes: c
                    .default
                    .as_ref()
                    .map(|d| format!("default {d} ({})", c.basis))
                    .unwrap_or_else(|| c.basis.clone()),
            })
            .collect(),
        checks: decl
            .checks
            .iter()
            .map(|c| TermRow {
                name: fitted_name(&c.name),
                meaning: c.meaning.clone(),
                takes: String::new(),
            })
            .collect(),
        assumptions: decl.assumptions.clone(),
        cautions: decl.cautions.clone(),
        references: decl.references.clone(),
    };
    statement.columns = MethodColumns::of(&statement);
    statement
}

/// Where a module comes from, in words.
fn origin_words(reg: &packwright_core::registry::Registered) -> String {
    match (&reg.origin, &reg.fingerprint) {
        (packwright_core::ModuleOrigin::BuiltIn, _) => "built into packwright".into(),
        (packwright_core::ModuleOrigin::External(path), Some(fp)) => {
            format!("external module {path}, {fp}")
        }
        (packwright_core::ModuleOrigin::External(path), None) => {
            format!("external module {path}")
        }
    }
}

/// A Typst label name for an item.
pub fn label_of(id: &str) -> String {
    format!("item-{id}")
}

fn value_words(value: &Value, system: UnitSystem, written: &str) -> String {
    match value {
        Value::Quantity { value, dimension } if written.is_empty() => {
            display::joined(display::measure(
                &packwright_api::Measure {
                    value: *value,
                    dimension: *dimension,
                },
                system,
            ))
        }
        Value::Structured(_) => "see the geometry below".into(),
        _ => written.to_string(),
    }
}

/// A file the package source refers to: its path in the sandbox and bytes.
pub type PackageFile = (String, Vec<u8>);

/// Builds the template data and the plot files for a run.
pub fn build(
    project: &Project,
    outcome: &RunOutcome,
    registry: &Registry,
    review: &Review,
) -> Result<(PackageData, Vec<PackageFile>), String> {
    let system = project.meta.units;
    let revision = project
        .meta
        .current_revision()
        .cloned()
        .ok_or("project.yaml lists no revision")?;
    let mut items = Vec::new();
    let mut summary = Vec::new();
    let mut plots_out = Vec::new();
    let mut all_refs = BTreeSet::new();
    let (mut check_count, mut failed_count) = (0, 0);
    let mut item_module = Vec::new();
    let mut methods: std::collections::BTreeMap<String, MethodStatement> = Default::default();
    for run in outcome.items.values() {
        let reg = registry
            .get(&run.item.module)
            .ok_or("item module vanished")?;
        let decl = &reg.declaration;
        methods
            .entry(decl.name.clone())
            .or_insert_with(|| method_statement(reg, system))
            .items
            .push(run.item.id.clone());
        let mut inputs = Vec::new();
        for spec in &decl.inputs {
            let Some(input) = run.inputs.values.get(&spec.name) else {
                continue;
            };
            let (source, link) = match &input.origin {
                Origin::Item { span } => (format!("{}:{}", span.file, span.line), None),
                Origin::Material { material, span } => (
                    format!("material {material} ({}:{})", span.file, span.line),
                    None,
                ),
                Origin::Link { item, output, .. } => {
                    (format!("{output} of {item}"), Some(label_of(item)))
                }
                Origin::Default => ("module default".into(), None),
            };
            let written = if matches!(input.origin, Origin::Link { .. }) {
                ""
            } else {
                input.written.as_str()
            };
            inputs.push(InputRow {
                name: fitted_name(&spec.name),
                meaning: spec.meaning.clone(),
                value: value_words(&input.value, system, written),
                source,
                link,
            });
        }
        let criteria: Vec<CriterionRow> = decl
            .criteria
            .iter()
            .filter_map(|c| {
                let v = run.inputs.criteria.get(&c.name)?;
                let default_si = c
                    .default
                    .as_ref()
                    .and_then(|d| packwright_api::units::parse_expecting(d, c.dimension).ok())
                    .map(|q| q.value_si);
                let current = match v {
                    Value::Quantity { value, .. } | Value::Number(value) => Some(*value),
                    _ => None,
                };
                let overridden = default_si != current;
                let value = match v {
                    Value::Quantity { value, dimension } => display::joined(display::measure(
                        &packwright_api::Measure {
                            value: *value,
                            dimension: *dimension,
                        },
                        system,
                    )),
                    Value::Number(x) => {
                        packwright_api::units::format_significant(*x, display::DISPLAY_FIGURES)
                    }
                    _ => String::new(),
                };
                Some(CriterionRow {
                    name: fitted_name(&c.name),
                    meaning: c.meaning.clone(),
                    value,
                    basis: if overridden {
                        "set in the item file".into()
                    } else {
                        c.basis.clone()
                    },
                })
            })
            .collect();
        let outputs: Vec<OutputRow> = decl
            .outputs
            .iter()
            .filter_map(|spec| {
                let m = run.outcome.outputs.get(&spec.name)?;
                let (value, unit) = display::output(m, Some(spec), system);
                Some(OutputRow {
                    name: fitted_name(&spec.name),
                    meaning: spec.meaning.clone(),
                    value,
                    unit,
                })
            })
            .collect();
        let mut passed = 0;
        let mut failed = Vec::new();
        let checks: Vec<CheckRow> = run
            .outcome
            .checks
            .iter()
            .map(|c| {
                let pass = c.status == Status::Pass;
                if pass {
                    passed += 1;
                } else {
                    failed.push(c.name.clone());
                }
                let show = |m: &Option<packwright_api::Measure>| {
                    m.as_ref()
                        .map(|m| display::joined(display::measure(m, system)))
                        .unwrap_or_default()
                };
                CheckRow {
                    name: fitted_name(&c.name),
                    pass,
                    value: show(&c.value),
                    relation: match c.relation {
                        Relation::AtMost => "≤".into(),
                        Relation::AtLeast => "≥".into(),
                        Relation::Condition => String::new(),
                    },
                    limit: show(&c.limit),
                    explanation: c.explanation.clone(),
                }
            })
            .collect();
        check_count += checks.len();
        failed_count += failed.len();
        let mut plots = Vec::new();
        for plot in &run.outcome.plots {
            let svg = crate::plot::svg(plot, system)?;
            let path = format!("plots/{}.svg", plots_out.len() + 1);
            plots_out.push((path.clone(), svg.into_bytes()));
            plots.push(PlotRef {
                path,
                title: plot.title.clone(),
            });
        }
        let key = decl
            .outputs
            .iter()
            .find(|o| o.key && run.outcome.outputs.contains_key(&o.name))
            .map(|spec| {
                format!(
                    "{} = {}",
                    spec.name.replace('_', " "),
                    display::joined(display::output(
                        &run.outcome.outputs[&spec.name],
                        Some(spec),
                        system
                    ))
                )
            })
            .unwrap_or_else(|| "no key result (see checks)".into());
        all_refs.extend(decl.references.iter().cloned());
        summary.push(SummaryRow {
            id: run.item.id.clone(),
            label: label_of(&run.item.id),
            title: run.item.title.clone(),
            module: decl.name.clone(),
            key,
            passed,
            any_fail: !failed.is_empty(),
            no_checks: checks.is_empty(),
            failed: failed.clone(),
        });
        item_module.push((run.item.id.clone(), decl.name.clone()));
        items.push(ItemData {
            number: items.len() + 1,
            method_label: method_label_of(&decl.name),
            method_title: method_title_of(decl),
            id: run.item.id.clone(),
            label: label_of(&run.item.id),
            title: run.item.title.clone(),
            module: decl.name.clone(),
            module_version: decl.version.clone(),
            module_origin: origin_words(reg),
            purpose: decl.purpose.clone(),
            file: run.item.file.to_string(),
            notes: run.item.notes.clone(),
            inputs_digest: run.inputs_digest.clone(),
            columns: ItemColumns::of(&inputs, &criteria, &outputs, &checks),
            inputs,
            criteria,
            method: method_rows(decl),
            outputs,
            any_fail: !failed.is_empty(),
            checks,
            plots,
            module_notes: run.outcome.notes.clone(),
            assumptions: decl.assumptions.clone(),
            cautions: decl.cautions.clone(),
            references: decl.references.clone(),
        });
    }
    let data = PackageData {
        project: ProjectData {
            name: project.meta.project.clone(),
            document: project.meta.document.clone(),
            title: project.meta.title.clone(),
            client: project.meta.client.clone(),
            units: match system {
                UnitSystem::Si => "SI".into(),
                UnitSystem::Us => "US customary".into(),
            },
        },
        status: status_words(&revision),
        revision,
        revisions: project.meta.revisions.clone(),
        digest: package_digest(outcome),
        review: review.clone(),
        item_count: summary.len(),
        check_count,
        failed_count,
        summary,
        items,
        methods: methods.into_values().collect(),
        references: all_refs.into_iter().collect(),
        contents: Vec::new(),
        tool_version: packwright_core::run::TOOL_VERSION.into(),
        item_module,
    };
    Ok((data, plots_out))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Names that fit the name column stay as written (the PDF's text has
    /// them whole); a name wider than the widest column may break after
    /// its underscores and is otherwise the same name.
    #[test]
    fn only_a_name_too_wide_for_its_column_may_break() {
        assert_eq!(fitted_name("acceleration_length"), "acceleration_length");
        let long = "acceleration_length_within_the_skirts_of_the_loading_point";
        let fitted = fitted_name(long);
        assert_ne!(fitted, long);
        assert_eq!(fitted.replace('\u{200B}', ""), long);
        assert!(fitted.contains("_\u{200B}within"));
    }

    /// An item's name and value columns fit its widest name and value and
    /// are shared by its inputs, limits and results.
    #[test]
    fn an_items_columns_fit_its_widest_entries() {
        let input = |name: &str, value: &str| InputRow {
            name: name.into(),
            meaning: String::new(),
            value: value.into(),
            source: String::new(),
            link: None,
        };
        let output = OutputRow {
            name: "acceleration_length_reached".into(),
            meaning: String::new(),
            value: "1.598".into(),
            unit: "m".into(),
        };
        let columns = ItemColumns::of(
            &[
                input("belt_speed", "4.5 m/s"),
                input("material", "iron-ore-fines"),
            ],
            &[],
            &[output],
            &[],
        );
        let em = |text: &str| crate::measure::em_width(text, false) + COLUMN_GAP;
        let width = |column: &str| column.trim_end_matches("em").parse::<f64>().unwrap();
        let name = width(&columns.name);
        assert!(
            name >= em("acceleration_length_reached")
                && name < em("acceleration_length_reached") + 0.01
        );
        let value = width(&columns.value);
        assert!(value >= em("iron-ore-fines") && value < em("iron-ore-fines") + 0.01);
    }
}
