//! Numerical guards of a run, tested with a small fake module whose outcome
//! the test chooses: a value that is not finite, in an output, a check, a
//! series or a plot, never becomes a result; it becomes a calculation error
//! naming the item, the value and the inputs behind it. Contract breaches
//! (undeclared or missing outputs, wrong dimensions, a panic) are caught the
//! same way.

use std::sync::Arc;

use packwright_api::prelude::*;
use packwright_api::{CalcError, Inputs, Origin, ResolvedInput, Value};

use super::{run, verify_outcome};
use crate::registry::{ModuleOrigin, Registry};
use crate::resolve::{Link, Plan, PlannedItem};

/// What the fake module does wrong.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Fault {
    None,
    NanOutput,
    InfiniteOutput,
    NanCheckValue,
    InfiniteCheckLimit,
    NanInSeries,
    InfiniteInPlot,
    ShortSeriesRow,
    UndeclaredOutput,
    MissingOutput,
    WrongDimension,
    UndeclaredCheck,
    Panic,
}

/// Turns its `speed` input into `force` (the same number in newtons) and
/// passes the speed on as `echo`, then breaks the outcome as told.
struct Fake(Fault);

impl Module for Fake {
    fn declaration(&self) -> ModuleDeclaration {
        ModuleDeclaration {
            name: "fake".into(),
            version: "1.0.0".into(),
            purpose: "A module whose outcome the test chooses.".into(),
            inputs: vec![InputSpec::quantity("speed", Dimension::Velocity, "a speed").above(0.0)],
            outputs: vec![
                OutputSpec::new("force", Dimension::Force, "kN", "lbf", "a force"),
                OutputSpec::new(
                    "echo",
                    Dimension::Velocity,
                    "m/s",
                    "ft/s",
                    "the speed, passed on",
                ),
                OutputSpec::number("ratio", "a ratio").optional(),
            ],
            criteria: vec![],
            checks: vec![CheckSpec::new("force_small", "The force is small.")],
            method: vec![],
            assumptions: vec![],
            cautions: vec![],
            references: vec![],
        }
    }

    fn compute(&self, inputs: &Inputs) -> Result<Outcome, CalcError> {
        let v: Velocity = inputs.quantity("speed")?;
        let f: Force = si(v.to_si());
        let mut out = Outcome::new();
        out.set("force", f);
        out.set("echo", v);
        out.check(Check::at_most(
            "force_small",
            f,
            si::<Force>(1e6),
            "The force must be small.",
        ));
        let mut series = Series::new(
            "history",
            &[("t", Dimension::Time), ("F", Dimension::Force)],
        );
        series.push(vec![0.0, f.value]);
        out.series.push(series);
        let mut plot = Plot::new(
            "history",
            "Force",
            Axis::new("t", Dimension::Time),
            Axis::new("F", Dimension::Force),
        );
        plot.layers.push(packwright_api::PlotLayer {
            label: None,
            style: packwright_api::LayerStyle::Line,
            points: vec![(0.0, f.value)],
        });
        out.plots.push(plot);
        match self.0 {
            Fault::None => {}
            Fault::NanOutput => out.set_number("ratio", f64::NAN),
            Fault::InfiniteOutput => out.set("force", si::<Force>(f64::INFINITY)),
            Fault::NanCheckValue => out.checks[0].value.as_mut().expect("value").value = f64::NAN,
            Fault::InfiniteCheckLimit => {
                out.checks[0].limit.as_mut().expect("limit").value = f64::NEG_INFINITY
            }
            Fault::NanInSeries => out.series[0].rows[0][1] = f64::NAN,
            Fault::InfiniteInPlot => out.plots[0].layers[0].points[0].0 = f64::INFINITY,
            Fault::ShortSeriesRow => out.series[0].rows[0].pop().map(drop).expect("a value"),
            Fault::UndeclaredOutput => out.set_number("surprise", 1.0),
            Fault::MissingOutput => {
                out.outputs.remove("force");
            }
            Fault::WrongDimension => out.set("force", v),
            Fault::UndeclaredCheck => out.check(Check::condition("surprise", true, "?")),
            Fault::Panic => panic!("the fake module gave up"),
        }
        Ok(out)
    }
}

fn inputs(speed: f64) -> Inputs {
    let mut inputs = Inputs {
        item: "FAKE-1".into(),
        ..Inputs::default()
    };
    inputs.values.insert(
        "speed".into(),
        ResolvedInput {
            value: Value::Quantity {
                value: speed,
                dimension: Dimension::Velocity,
            },
            origin: Origin::Default,
            written: format!("{speed} m/s"),
        },
    );
    inputs
}

fn outcome_of(fault: Fault) -> Result<(), CalcError> {
    let module = Fake(fault);
    let outcome = module.compute(&inputs(2.0))?;
    verify_outcome(&outcome, &module.declaration(), &inputs(2.0))
}

#[test]
fn a_sound_outcome_passes() {
    assert_eq!(outcome_of(Fault::None), Ok(()));
}

#[test]
fn values_that_are_not_finite_are_numerical_errors_naming_value_and_inputs() {
    for (fault, names) in [
        (Fault::NanOutput, "output `ratio`"),
        (Fault::InfiniteOutput, "output `force`"),
        (Fault::NanCheckValue, "check `force_small`"),
        (Fault::InfiniteCheckLimit, "check `force_small`"),
        (Fault::NanInSeries, "series `history`"),
        (Fault::InfiniteInPlot, "plot `history`"),
    ] {
        match outcome_of(fault) {
            Err(CalcError::Numerical {
                quantity, inputs, ..
            }) => {
                assert_eq!(quantity, names, "{fault:?}");
                assert_eq!(inputs, vec!["speed".to_string()], "{fault:?}");
            }
            other => panic!("{fault:?}: a numerical error expected, got {other:?}"),
        }
    }
}

#[test]
fn contract_breaches_are_contract_errors() {
    for fault in [
        Fault::ShortSeriesRow,
        Fault::UndeclaredOutput,
        Fault::MissingOutput,
        Fault::WrongDimension,
        Fault::UndeclaredCheck,
    ] {
        assert!(
            matches!(outcome_of(fault), Err(CalcError::Contract(_))),
            "{fault:?}: {:?}",
            outcome_of(fault)
        );
    }
}

/// A plan of two items of the faulty module: `FAKE-1`, and `NEXT`, whose
/// speed is linked from `FAKE-1.echo`, so that a failure of the first must
/// skip the second.
fn two_item_run(fault: Fault) -> super::RunOutcome {
    let mut registry = Registry::new();
    registry
        .register(Arc::new(Fake(fault)), ModuleOrigin::BuiltIn)
        .expect("registers");
    let item = |id: &str| PlannedItem {
        id: id.into(),
        module: "fake".into(),
        title: id.into(),
        notes: None,
        file: Arc::from(format!("{id}.yaml")),
        inputs: Inputs {
            item: id.into(),
            ..inputs(2.0)
        }
        .into(),
        links: vec![],
        materials: vec![],
        own_digests: None,
    };
    let mut next = item("NEXT");
    next.inputs.make_mut().values.remove("speed");
    next.links.push(Link {
        input: "speed".into(),
        item: "FAKE-1".into(),
        output: "echo".into(),
        span: packwright_api::Span::new("NEXT.yaml", 4, 10),
        written: "FAKE-1.echo".into(),
    });
    let plan = Plan {
        items: [
            ("FAKE-1".to_string(), Arc::new(item("FAKE-1"))),
            ("NEXT".to_string(), Arc::new(next)),
        ]
        .into_iter()
        .collect(),
        levels: vec![vec!["FAKE-1".into()], vec!["NEXT".into()]],
    };
    run(&plan, &registry, None)
}

#[test]
fn a_failed_item_gives_no_result_and_its_dependants_are_skipped() {
    for fault in [Fault::NanOutput, Fault::InfiniteInPlot, Fault::Panic] {
        let outcome = two_item_run(fault);
        assert!(outcome.items.is_empty(), "{fault:?}: nothing is a result");
        assert_eq!(outcome.failures.len(), 1, "{fault:?}");
        let failure = &outcome.failures[0];
        assert_eq!(
            (failure.item.as_str(), failure.file.as_str()),
            ("FAKE-1", "FAKE-1.yaml")
        );
        assert_eq!(outcome.skipped, vec!["NEXT".to_string()], "{fault:?}");
        let text = failure.error.to_string();
        match fault {
            Fault::Panic => assert!(text.contains("stopped unexpectedly"), "{text}"),
            _ => assert!(
                text.contains("not a finite number") && text.contains("speed"),
                "{text}"
            ),
        }
    }
}

#[test]
fn a_sound_run_fills_the_link() {
    let outcome = two_item_run(Fault::None);
    assert!(outcome.failures.is_empty() && outcome.skipped.is_empty());
    assert_eq!(outcome.items.len(), 2);
}

/// An outcome taken from stored bytes answers an output and its checks'
/// statuses from its glance, without decoding the whole outcome, and the
/// answers are the outcome's own.
#[test]
fn a_stored_outcome_answers_outputs_and_checks_from_its_glance() {
    let outcome = Fake(Fault::None).compute(&inputs(2.0)).expect("computes");
    let glance = super::Glance::encode_of(&outcome).expect("encodes");
    let full = postcard::to_allocvec(&outcome).expect("encodes");
    let bytes: super::Encoded = std::sync::Arc::new([glance.as_slice(), full.as_slice()].concat());
    let whole = glance.len()..bytes.len();
    let stored = super::SharedOutcome::encoded(bytes, 0..glance.len(), whole);
    assert_eq!(
        stored.output("force").as_ref(),
        outcome.outputs.get("force")
    );
    assert_eq!(
        stored.check_statuses(),
        [("force_small", packwright_api::Status::Pass)]
    );
    assert!(!stored.full.is_decoded(), "the whole outcome was decoded");
    assert_eq!(
        stored.series, outcome.series,
        "the whole outcome reads back"
    );
    assert_eq!(
        stored.check_statuses(),
        [("force_small", outcome.checks[0].status)]
    );
}
