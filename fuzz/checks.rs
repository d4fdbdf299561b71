//! What every fuzz input must keep, shared by the fuzz targets
//! (`fuzz_targets/*.rs`) and the regression test that replays the findings
//! in the normal test run (`tests/tests/fuzz_regressions.rs`), so a finding
//! is checked by the very function that found it.
//!
//! Depends on the plug-in contract, the engine and the built-in modules;
//! owns nothing but a temporary project folder per caller.

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::sync::Arc;

use packwright_api::units::{parse_expecting, parse_quantity};
use packwright_api::{Dimension, Module, Node, NodeValue};
use packwright_core::{EngineError, ModuleOrigin, Registry};

/// The quantity parser on any text: it never panics, a value is always
/// finite, and `parse_expecting` agrees with `parse_quantity` for every
/// dimension (it accepts exactly the texts whose unit is of that
/// dimension, and gives the same value).
pub(crate) fn quantity(text: &str) {
    let parsed = parse_quantity(text);
    match &parsed {
        Ok(q) => assert!(q.value_si.is_finite(), "{text:?} gave {q:?}"),
        Err(e) => assert!(!e.to_string().is_empty()),
    }
    for dimension in Dimension::ALL {
        match (parse_expecting(text, dimension), &parsed) {
            (Ok(e), Ok(q)) => {
                assert_eq!(e.dimension, dimension, "{text:?}");
                assert_eq!(q.dimension, dimension, "{text:?}");
                assert_eq!(e.value_si.to_bits(), q.value_si.to_bits(), "{text:?}");
            }
            (Ok(e), Err(q)) => panic!("{text:?}: expecting {dimension} gave {e:?}, plain gave {q}"),
            (Err(e), Ok(q)) => {
                assert_ne!(q.dimension, dimension, "{text:?}: {e}");
                assert!(!e.to_string().is_empty());
            }
            (Err(_), Err(_)) => {}
        }
    }
}

/// The built-in modules, registered as the binary registers them.
pub(crate) fn registry() -> Registry {
    let modules: Vec<Arc<dyn Module>> = vec![
        Arc::new(packwright_belt_pickup::BeltPickup),
        Arc::new(packwright_chute_discharge::ChuteDischarge),
        Arc::new(packwright_hopper_outlet::HopperOutlet),
        Arc::new(packwright_chain_payout::ChainPayout),
        Arc::new(packwright_hoist_loads::HoistLoads),
    ];
    let mut registry = Registry::new();
    for module in modules {
        registry
            .register(module, ModuleOrigin::BuiltIn)
            .expect("built-in modules are declared correctly");
    }
    registry
}

/// A small valid project (one bulk material, one chain) that the item
/// check writes its one item file into.
pub(crate) struct Scratch {
    _dir: tempfile::TempDir,
    /// The project root.
    pub(crate) root: PathBuf,
    registry: Registry,
}

impl Scratch {
    /// Makes the project folder.
    pub(crate) fn new() -> Scratch {
        let dir = tempfile::tempdir().expect("temporary folder");
        let root = dir.path().to_path_buf();
        std::fs::create_dir_all(root.join("materials")).unwrap();
        std::fs::write(
            root.join("project.yaml"),
            "project: Fuzz\ndocument: FZ-0001\ntitle: Fuzzing\nclient: Nobody\nunits: si\n\
             revisions:\n  - rev: A\n    date: 2026-01-01\n",
        )
        .unwrap();
        std::fs::write(
            root.join("materials/ore.yaml"),
            "id: ore\nkind: bulk\nproperties:\n  bulk_density: 2400 kg/m3\n  belt_friction: 0.6\n  \
             skirt_friction: 0.55\n  surcharge_angle: 20 deg\n  chute_friction: 0.55\n  particle_size: 8 mm\n",
        )
        .unwrap();
        std::fs::write(
            root.join("materials/chain.yaml"),
            "id: chain\nkind: chain\nproperties:\n  mass_per_length: 5.7 kg/m\n  chain_size: 16 mm\n  chain_grade: G8\n",
        )
        .unwrap();
        Scratch {
            _dir: dir,
            root,
            registry: registry(),
        }
    }
}

impl Default for Scratch {
    fn default() -> Self {
        Scratch::new()
    }
}

/// The item loader on any bytes: the YAML reader and the whole check of a
/// project whose one item file holds them never panic, and every problem
/// points at a line and column of a file of the project.
pub(crate) fn item(bytes: &[u8], scratch: &Scratch) {
    let file: Arc<str> = Arc::from("item.yaml");
    match packwright_core::yaml::parse_bytes(&file, bytes) {
        Ok(Some(node)) => spans_inside(&node, &file),
        Ok(None) => {}
        Err(d) => {
            let span = d.span.as_ref().expect("a YAML problem has a place");
            assert!(span.line >= 1 && span.column >= 1, "{d}");
            assert!(!d.message.is_empty());
        }
    }
    std::fs::write(scratch.root.join("item.yaml"), bytes).expect("write the item");
    match packwright_core::check(&scratch.root, &scratch.registry) {
        Ok(_) => {}
        Err(EngineError::BadInput(problems)) => {
            assert!(!problems.is_empty(), "bad input without a problem");
            for d in &problems.0 {
                for span in d.span.iter().chain(d.related.iter().map(|(s, _)| s)) {
                    assert!(span.line >= 1 && span.column >= 1, "{d}");
                    assert!(
                        Path::new(&scratch.root).join(&*span.file).exists(),
                        "{d}: no such file"
                    );
                }
                let _ = d.to_string();
            }
        }
        Err(other) => panic!("check gave {other}"),
    }
}

fn spans_inside(node: &Node, file: &Arc<str>) {
    assert_eq!(&node.span.file, file);
    assert!(node.span.line >= 1 && node.span.column >= 1);
    match &node.value {
        NodeValue::List(items) => items.iter().for_each(|n| spans_inside(n, file)),
        NodeValue::Map(entries) => entries.iter().for_each(|(k, v)| {
            assert!(k.as_text().is_some(), "a key that is not text");
            spans_inside(k, file);
            spans_inside(v, file);
        }),
        _ => {}
    }
}
