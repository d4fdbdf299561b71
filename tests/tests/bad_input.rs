//! The bad-input corpus: the real binary on project trees that are wrong in
//! one way each (malformed YAML, units, values, links, every module's own
//! rules, templates, files and links that leave the tree). Every case must
//! give exit code 2 without a panic, a message naming the file and line and
//! what was expected, and leave `results/`, `package/` and `issued/`
//! exactly as they were.
//!
//! The table in [`cases`] is driven by [`corpus_of_bad_inputs`]; files,
//! symbolic links and templates, which need more than file contents, are
//! separate tests below.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use packwright_tests::{packwright, snapshot, tree, Ran};

/// A belt-pickup item with every input written out (line numbers below
/// refer to this text: `belt_speed` is on line 6).
const BP: &str = "id: BP-1
module: belt-pickup
title: Test loading point
inputs:
  mass_flow: 1800 t/h
  belt_speed: 4.5 m/s
  bulk_density: 1600 kg/m3
  belt_friction: 0.6
  skirt_friction: 0.5
  skirt_width: 1000 mm
";

/// A bulk material for the items that name one.
const ORE: &str = "id: ore
kind: bulk
name: Test ore
properties:
  bulk_density: 2400 kg/m3
  belt_friction: 0.6
  skirt_friction: 0.55
  surcharge_angle: 20 deg
  chute_friction: 0.55
  particle_size: 8 mm
";

/// A lifting chain.
const CHAIN: &str = "id: g8-16
kind: chain
name: Grade 8 chain, 16 mm
properties:
  mass_per_length: 5.7 kg/m
  chain_size: 16 mm
  chain_grade: G8
";

/// An anchor chain.
const ANCHOR_CHAIN: &str = "id: u2-38
kind: chain
name: Stud-link anchor chain, 38 mm, grade U2
properties:
  mass_per_length: 31.6 kg/m
  chain_size: 38 mm
  chain_grade: U2
";

/// A chute-discharge item (the `chute:` path starts on line 15).
const TC: &str = "id: TC-1
module: chute-discharge
title: Test transfer
inputs:
  material: ore
  mass_flow: 6000 t/h
  belt_speed: 4.5 m/s
  belt_width: 1800 mm
  trough_angle: 35 deg
  centre_roll_length: 670 mm
  belt_thickness: 22 mm
  pulley_diameter: 1250 mm
  belt_slope: 0 deg
  chute:
    - line: { from: [1.529, 0.005], to: [3.736, -1.719] }
    - arc:  { centre: [4.967, -0.143], radius: 2.0 m, from_angle: -128 deg, to_angle: -105 deg }
  impact_retention: 0.8
  chute_width: 1200 mm
  receiving_belt_speed: 5.0 m/s
";

/// A hopper-outlet item.
const BIN: &str = "id: BIN-1
module: hopper-outlet
title: Test bin outlet
inputs:
  material: ore
  method: beverloo
  outlet_shape: circular
  outlet_diameter: 250 mm
  hopper_half_angle: 18 deg
  required_mass_flow: 150 t/h
";

/// A chain-payout item, pile case.
const PILE: &str = "id: CH-1
module: chain-payout
title: Test chain off a pile
inputs:
  case: pile
  chain: g8-16
  drop_height: 12 m
  rim_height: 0.35 m
  pile_push: 0.05
  landing_push: 0.10
  payout_length: 26 m
  initial_overhang: 1.0 m
";

/// A chain-payout item, brake case.
const BRAKE: &str = "id: CH-2
module: chain-payout
title: Test anchor let go
inputs:
  case: brake
  chain: u2-38
  end_mass: 1440 kg
  submerged: true
  depth: 21.5 m
  payout_length: 137.5 m
  brake_force: 55 kN
  brake_applied_at: 12 m
";

/// A hoist-loads item on the EN 13001 basis.
const HOIST: &str = "id: H-1
module: hoist-loads
title: Test crane lift
inputs:
  hoisted_mass: 8.6 t
  rated_capacity: 10 t
  basis: en13001
  hoisting_class: HC2
  drive_class: HD2
  hoisting_speed: 6 m/min
  creep_speed: 0.8 m/min
  falls: 4
  rope_diameter: 16 mm
  fill_factor: 0.58
  rope_modulus: 100 GPa
  rope_length: 9.5 m
  rope_breaking_force: 192 kN
  damping_ratio: 0.02
";

/// The project.yaml of the test trees (its revision date is on line 8).
const PROJECT: &str = packwright_tests::PROJECT_YAML;

/// One bad project: files written over the good base tree, and what the
/// message must say.
struct Case {
    /// A short name, shown when the case fails.
    name: &'static str,
    /// Files written over the base tree (relative path, bytes).
    files: Vec<(&'static str, Vec<u8>)>,
    /// Base-tree files to leave out.
    without: &'static [&'static str],
    /// The file and line the message must name.
    at: (&'static str, u32),
    /// Fragments the message must hold: what is wrong and what was expected.
    says: &'static [&'static str],
}

/// `text` with `from` replaced by `to` (which must occur).
fn edit(text: &str, from: &str, to: &str) -> Vec<u8> {
    assert!(text.contains(from), "`{from}` is not in the text");
    text.replacen(from, to, 1).into_bytes()
}

fn case(
    name: &'static str,
    files: Vec<(&'static str, Vec<u8>)>,
    at: (&'static str, u32),
    says: &'static [&'static str],
) -> Case {
    Case {
        name,
        files,
        without: &[],
        at,
        says,
    }
}

/// The belt-pickup item with one edit, as the only change.
fn bp_case(
    name: &'static str,
    from: &str,
    to: &str,
    line: u32,
    says: &'static [&'static str],
) -> Case {
    case(
        name,
        vec![("conveyors/bp.yaml", edit(BP, from, to))],
        ("conveyors/bp.yaml", line),
        says,
    )
}

/// A module's item (added to the tree) with one edit.
fn module_case(
    name: &'static str,
    file: &'static str,
    text: &str,
    from: &str,
    to: &str,
    line: u32,
    says: &'static [&'static str],
) -> Case {
    case(name, vec![(file, edit(text, from, to))], (file, line), says)
}

/// The base tree every case starts from: one good item and the materials.
fn base_files() -> Vec<(&'static str, Vec<u8>)> {
    vec![
        ("project.yaml", PROJECT.as_bytes().to_vec()),
        ("conveyors/bp.yaml", BP.as_bytes().to_vec()),
        ("materials/ore.yaml", ORE.as_bytes().to_vec()),
        ("materials/g8-16.yaml", CHAIN.as_bytes().to_vec()),
        ("materials/u2-38.yaml", ANCHOR_CHAIN.as_bytes().to_vec()),
    ]
}

fn cases() -> Vec<Case> {
    let deep_flow = format!("[{}]", "[".repeat(199) + &"]".repeat(199));
    let deep_map: String = (0..100)
        .map(|i| format!("{}k{i}:\n", "  ".repeat(i)))
        .collect();
    let alias_bomb = "id: BOMB\nmodule: belt-pickup\ninputs:\n  a: &a [x, x, x, x, x, x, x, x, x]\n  b: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a]\n  c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b]\n  d: [*c, *c, *c, *c, *c, *c, *c, *c, *c]\n";
    let mut utf16 = vec![0xFF, 0xFE];
    utf16.extend(BP.encode_utf16().flat_map(|u| u.to_le_bytes()));
    let cycle_item = |id: &str, from: &str| {
        TC.replace("id: TC-1", &format!("id: {id}"))
            .replace(
                "  belt_speed: 4.5 m/s",
                &format!("  belt_speed: {{ from: {from}.exit_speed }}"),
            )
            .into_bytes()
    };
    vec![
        // --- YAML and files -------------------------------------------------
        bp_case("unclosed flow list", "module: belt-pickup", "module: [belt-pickup", 3, &["not valid YAML", "expected:"]),
        bp_case("no space after a colon", "title: Test loading point\ninputs:", "title:Test loading point\n  inputs: 3", 4, &["not valid YAML", "space after the colon"]),
        bp_case("tab indentation", "  belt_speed", "\tbelt_speed", 6, &["tab", "indent with spaces"]),
        case("empty file", vec![("conveyors/empty.yaml", Vec::new())], ("conveyors/empty.yaml", 1), &["the file is empty", "expected: an item"]),
        case("only comments", vec![("conveyors/note.yaml", b"# to do\n".to_vec())], ("conveyors/note.yaml", 1), &["the file is empty"]),
        case("a list, not an item", vec![("conveyors/list.yaml", b"- a\n- b\n".to_vec())], ("conveyors/list.yaml", 1), &["should be a mapping", "not a list"]),
        case("non-UTF-8 bytes", vec![("conveyors/bp.yaml", BP.replace("title: Test loading point", "title: Test ##").into_bytes().into_iter().map(|b| if b == b'#' { 0xFF } else { b }).collect())], ("conveyors/bp.yaml", 3), &["not valid UTF-8", "saved as UTF-8"]),
        case("UTF-16 text", vec![("conveyors/wide.yaml", utf16)], ("conveyors/wide.yaml", 1), &["not valid UTF-8", "saved as UTF-8"]),
        case("YAML alias bomb", vec![("conveyors/bomb.yaml", alias_bomb.as_bytes().to_vec())], ("conveyors/bomb.yaml", 4), &["anchors", "expected: write the value out"]),
        bp_case("deep flow nesting", "  belt_speed: 4.5 m/s", &format!("  belt_speed: {deep_flow}"), 6, &["deeper than 64 levels", "expected:"]),
        case("deep block nesting", vec![("conveyors/deep.yaml", format!("id: DEEP\n{deep_map}").into_bytes())], ("conveyors/deep.yaml", 66), &["deeper than 64 levels"]),
        case("nesting past the parser's limit", vec![("conveyors/deeper.yaml", format!("x: {}{}\n", "[".repeat(100_000), "]".repeat(100_000)).into_bytes())], ("conveyors/deeper.yaml", 1), &["deeper than 64 levels"]),
        bp_case("YAML tag", "4.5 m/s", "!!float 4.5", 6, &["tags", "expected: a plain value"]),
        case("two documents in a file", vec![("conveyors/bp.yaml", format!("{BP}---\n{BP}").into_bytes())], ("conveyors/bp.yaml", 11), &["second YAML document", "one item per file"]),
        case("duplicate key", vec![("conveyors/bp.yaml", format!("{BP}  mass_flow: 100 t/h\n").into_bytes())], ("conveyors/bp.yaml", 11), &["given twice", "first at line 5"]),
        bp_case("a number as a key", "  skirt_width: 1000 mm", "  1000: skirt_width", 10, &["a mapping key must be a word"]),
        // --- the item's own keys --------------------------------------------
        bp_case("unknown item key", "title:", "titel:", 3, &["unknown key `titel`", "did you mean `title`?", "expected: one of: id, module"]),
        bp_case("no id", "id: BP-1\n", "", 1, &["has no `id`", "expected: `id: CV-101-LOAD`"]),
        bp_case("id with a dot", "id: BP-1", "id: BP.1", 1, &["not a valid item id", "letters, digits"]),
        bp_case("id of the wrong type", "id: BP-1", "id: [1, 2]", 1, &["should be text, not a list"]),
        case("inputs not a mapping", vec![("conveyors/list-inputs.yaml", b"id: LIST\nmodule: belt-pickup\ninputs:\n  - 1800 t/h\n".to_vec())], ("conveyors/list-inputs.yaml", 4), &["`inputs` should be a mapping, not a list", "indented `name: value` lines"]),
        case("duplicate item id", vec![("other/bp-copy.yaml", BP.as_bytes().to_vec())], ("other/bp-copy.yaml", 1), &["item id `BP-1` is used twice", "conveyors/bp.yaml:1:", "the other item with this id"]),
        // --- project.yaml ------------------------------------------------------
        case("empty project.yaml", vec![("project.yaml", Vec::new())], ("project.yaml", 1), &["project.yaml is empty", "expected: `project:`"]),
        case("project.yaml without a document number", vec![("project.yaml", edit(PROJECT, "document: TEST-001\n", ""))], ("project.yaml", 1), &["has no `document`", "expected: `document:"]),
        case("unknown unit system", vec![("project.yaml", edit(PROJECT, "units: si", "units: metric"))], ("project.yaml", 5), &["`metric` is not a unit system", "`units: us`"]),
        case("impossible date", vec![("project.yaml", edit(PROJECT, "date: 2026-01-05\n    desc", "date: 2026-13-05\n    desc"))], ("project.yaml", 8), &["not a date", "YYYY-MM-DD"]),
        case("no revisions", vec![("project.yaml", format!("{}revisions: []\n", PROJECT.split("revisions").next().unwrap()).into_bytes())], ("project.yaml", 6), &["at least one revision"]),
        case("unknown project key", vec![("project.yaml", edit(PROJECT, "client:", "cleint:"))], ("project.yaml", 4), &["unknown key `cleint`", "did you mean `client`?"]),
        case("document number that is a path", vec![("project.yaml", edit(PROJECT, "TEST-001", "../../etc/x"))], ("project.yaml", 2), &["cannot stand in a file name", "expected: letters, digits"]),
        case("revision mark that leaves package/", vec![("project.yaml", edit(PROJECT, "rev: A", "rev: ../../../escaped"))], ("project.yaml", 7), &["revision mark `../../../escaped`", "expected: letters, digits"]),
        // --- materials ------------------------------------------------------
        bp_case("unknown material", "  bulk_density: 1600 kg/m3\n", "  material: ores\n", 7, &["no material `ores`", "did you mean `ore`?", "expected: one of: ore"]),
        case("material property of the wrong dimension", vec![("conveyors/bp.yaml", edit(BP, "  bulk_density: 1600 kg/m3\n", "  material: ore\n")), ("materials/ore.yaml", edit(ORE, "2400 kg/m3", "2400 kg"))], ("materials/ore.yaml", 5), &["property `bulk_density`", "`kg` is a unit of a mass", "1600 kg/m3"]),
        case("unknown material kind", vec![("materials/ore.yaml", edit(ORE, "kind: bulk", "kind: rock"))], ("materials/ore.yaml", 2), &["`rock` is not a material kind", "`kind: bulk` or `kind: chain`"]),
        case("duplicate material id", vec![("materials/ore-copy.yaml", ORE.as_bytes().to_vec())], ("materials/ore-copy.yaml", 1), &["material id `ore` is used twice", "materials/ore.yaml:1:"]),
        bp_case("a chain where a bulk material belongs", "  bulk_density: 1600 kg/m3\n", "  material: g8-16\n", 7, &["is a chain material", "takes a bulk material"]),
        // --- units and values -------------------------------------------------
        bp_case("number without unit", "4.5 m/s", "4.5", 6, &["has no unit", "for example `4.5 m/s`"]),
        bp_case("unknown unit", "4.5 m/s", "4.5 furlong/s", 6, &["unknown unit `furlong/s`", "a speed with a unit"]),
        bp_case("wrong dimension", "4.5 m/s", "4.5 kg", 6, &["`kg` is a unit of a mass", "a speed with a unit"]),
        bp_case("NaN with a unit", "4.5 m/s", "NaN m/s", 6, &["not a finite number", "a speed with a unit"]),
        bp_case("YAML .nan", "4.5 m/s", ".nan", 6, &["has no unit", "a speed with a unit"]),
        bp_case("infinity with a unit", "4.5 m/s", "inf m/s", 6, &["not a finite number"]),
        bp_case("a number past a double's range", "4.5 m/s", "1e400 m/s", 6, &["not a finite number"]),
        bp_case("absurdly large value", "1800 t/h", "1e300 t/h", 5, &["beyond any physical value", "a mass flow rate with a unit"]),
        bp_case("infinite plain number", "belt_friction: 0.6", "belt_friction: .inf", 8, &["not a finite number", "a plain number"]),
        bp_case("negative speed", "4.5 m/s", "-4.5 m/s", 6, &["out of range", "more than 0"]),
        bp_case("friction above 2", "belt_friction: 0.6", "belt_friction: 2.5", 8, &["out of range", "at most 2"]),
        bp_case("friction with a unit", "belt_friction: 0.6", "belt_friction: 0.6 m", 8, &["not a plain number", "for example `0.6`"]),
        bp_case("text for a number", "belt_friction: 0.6", "belt_friction: high", 8, &["`high` is not a plain number"]),
        bp_case("true/false for a speed", "4.5 m/s", "true", 6, &["is true/false", "a speed with a unit"]),
        bp_case("empty value", "4.5 m/s", "~", 6, &["`belt_speed` has no value", "a speed with a unit"]),
        bp_case("a list for a speed", "4.5 m/s", "[4.5, m/s]", 6, &["not a list", "a speed with a unit"]),
        bp_case("unknown input", "belt_speed:", "belt_sped:", 6, &["`belt_sped` is not an input", "did you mean `belt_speed`?", "expected: one of: mass_flow"]),
        bp_case("missing required input", "  skirt_width: 1000 mm\n", "", 4, &["lacks the required input `skirt_width`", "a length with a unit"]),
        case("angle out of range", vec![("conveyors/bp.yaml", format!("{BP}  belt_slope: 95 deg\n").into_bytes())], ("conveyors/bp.yaml", 11), &["out of range", "an angle with a unit"]),
        case("unknown criterion", vec![("conveyors/bp.yaml", format!("{BP}criteria:\n  max_accel_length: 3 m\n").into_bytes())], ("conveyors/bp.yaml", 12), &["not a criterion", "did you mean `max_acceleration_length`?"]),
        case("criterion of the wrong dimension", vec![("conveyors/bp.yaml", format!("{BP}criteria:\n  max_acceleration_length: 3 kN\n").into_bytes())], ("conveyors/bp.yaml", 12), &["`kN` is a unit of a force", "a length with a unit"]),
        // --- modules --------------------------------------------------------
        bp_case("unknown module", "module: belt-pickup", "module: belt-pikcup", 2, &["which packwright does not have", "did you mean `belt-pickup`?", "chute-discharge, hoist-loads, hopper-outlet"]),
        // --- links ----------------------------------------------------------
        case(
            "link cycle of three items",
            vec![("transfers/a.yaml", cycle_item("TC-A", "TC-C")), ("transfers/b.yaml", cycle_item("TC-B", "TC-A")), ("transfers/c.yaml", cycle_item("TC-C", "TC-B"))],
            ("transfers/a.yaml", 1),
            &["in a cycle: TC-A -> TC-C -> TC-B -> TC-A", "transfers/b.yaml:1:", "transfers/c.yaml:1:", "`TC-B` is on the cycle", "`TC-C` is on the cycle"],
        ),
        module_case("link to itself", "transfers/tc.yaml", TC, "  belt_speed: 4.5 m/s", "  belt_speed: { from: TC-1.exit_speed }", 7, &["links to itself", "another item's output"]),
        module_case("link to a missing item", "transfers/tc.yaml", TC, "  belt_speed: 4.5 m/s", "  belt_speed: { from: BP-2.exit_speed }", 7, &["there is no item `BP-2`", "did you mean `BP-1`?"]),
        case("link to a missing output of an item", vec![("transfers/tc.yaml", TC.as_bytes().to_vec()), ("conveyors/bp.yaml", format!("{BP}  feed_speed_normal: {{ from: TC-1.exit_sped }}\n").into_bytes())], ("conveyors/bp.yaml", 11), &["has no output `exit_sped`", "did you mean `exit_speed`?", "transfers/tc.yaml:1:"]),
        case("link of the wrong dimension", vec![("transfers/tc.yaml", TC.as_bytes().to_vec()), ("conveyors/bp.yaml", format!("{BP}  feed_speed_normal: {{ from: TC-1.impact_point_x }}\n").into_bytes())], ("conveyors/bp.yaml", 11), &["`TC-1.impact_point_x` is a length", "expected: a link to an output that is a speed"]),
        bp_case("link without an output", "  belt_speed: 4.5 m/s", "  belt_speed: { from: TC-1 }", 6, &["not a link of the form ITEM.OUTPUT"]),
        bp_case("link with another key", "  belt_speed: 4.5 m/s", "  belt_speed: { from: TC-1.exit_speed, scale: 2 }", 6, &["a link has only the key `from`"]),
        // --- each module's own rules ------------------------------------------
        module_case("chute: disconnected segments", "transfers/tc.yaml", TC, "to: [3.736, -1.719]", "to: [3.0, -1.0]", 16, &["must be one connected path", "within 10 mm"]),
        module_case("chute: negative radius", "transfers/tc.yaml", TC, "radius: 2.0 m", "radius: -2.0 m", 16, &["a radius must be positive"]),
        module_case("chute: the trajectory misses the chute", "transfers/tc.yaml", TC, "    - line: { from: [1.529, 0.005], to: [3.736, -1.719] }\n    - arc:  { centre: [4.967, -0.143], radius: 2.0 m, from_angle: -128 deg, to_angle: -105 deg }", "    - line: { from: [-5, -10], to: [-4, -11] }", 15, &["never meets the chute path", "lies across the trajectory"]),
        module_case("chute: unknown segment kind", "transfers/tc.yaml", TC, "- line:", "- lien:", 15, &["segment 1 is `lien`", "`line` or `arc`"]),
        module_case("chute: point with a mass unit", "transfers/tc.yaml", TC, "[1.529, 0.005]", "[1.529 kg, 0.005]", 15, &["is a mass, not a length", "a length in metres"]),
        module_case("chute: no segments", "transfers/tc.yaml", TC, "  chute:\n    - line: { from: [1.529, 0.005], to: [3.736, -1.719] }\n    - arc:  { centre: [4.967, -0.143], radius: 2.0 m, from_angle: -128 deg, to_angle: -105 deg }", "  chute: []", 14, &["the chute has no segments"]),
        module_case("chute: retention above 1", "transfers/tc.yaml", TC, "impact_retention: 0.8", "impact_retention: 1.5", 17, &["out of range", "at most 1"]),
        module_case("hopper: slot without its sizes", "transfers/bin.yaml", BIN, "outlet_shape: circular", "outlet_shape: slot", 7, &["`outlet_width` is needed for a slot outlet", "`outlet_length` is needed"]),
        module_case("hopper: Johanson without the hopper angle", "transfers/bin.yaml", BIN, "method: beverloo\n  outlet_shape: circular\n  outlet_diameter: 250 mm\n  hopper_half_angle: 18 deg", "method: johanson\n  outlet_shape: circular\n  outlet_diameter: 250 mm", 7, &["`hopper_half_angle` is needed for the Johanson"]),
        module_case("hopper: vertical hopper wall", "transfers/bin.yaml", BIN, "18 deg", "90 deg", 9, &["out of range", "an angle with a unit"]),
        module_case("hopper: unknown method", "transfers/bin.yaml", BIN, "method: beverloo", "method: janssen", 6, &["`janssen` is not one of the choices", "beverloo, johanson"]),
        module_case("chain: unknown case", "chain/ch.yaml", PILE, "case: pile", "case: heap", 5, &["`heap` is not one of the choices for `case`: pile, brake"]),
        module_case("chain: pile push of 0.6", "chain/ch.yaml", PILE, "pile_push: 0.05", "pile_push: 0.6", 9, &["out of range", "less than 0.5"]),
        module_case("chain: bulk material for a chain", "chain/ch.yaml", PILE, "chain: g8-16", "chain: ore", 6, &["is a bulk material", "takes a chain material"]),
        module_case("chain: brake case without a brake force", "chain/ch.yaml", BRAKE, "  brake_force: 55 kN\n", "", 5, &["needs `brake_force`", "`brake_force: 120 kN`"]),
        module_case("chain: drop height of zero", "chain/ch.yaml", PILE, "drop_height: 12 m", "drop_height: 0 m", 7, &["out of range"]),
        module_case("hoist: hoisting class HC9", "lifting/h.yaml", HOIST, "hoisting_class: HC2", "hoisting_class: HC9", 8, &["`HC9` is not one of the choices", "HC1, HC2, HC3, HC4"]),
        module_case("hoist: EN 13001 without a hoisting class", "lifting/h.yaml", HOIST, "  hoisting_class: HC2\n", "", 7, &["needs `hoisting_class`", "`hoisting_class: HC2`"]),
        module_case("hoist: no rope falls", "lifting/h.yaml", HOIST, "falls: 4", "falls: 0", 12, &["out of range", "at least 1"]),
        module_case("hoist: half a rope fall", "lifting/h.yaml", HOIST, "falls: 4", "falls: 2.5", 12, &["not a whole number", "a whole number, such as `4`"]),
        module_case("hoist: unknown basis", "lifting/h.yaml", HOIST, "basis: en13001", "basis: iso4301", 7, &["`iso4301` is not one of the choices for `basis`"]),
        module_case("hoist: critical damping", "lifting/h.yaml", HOIST, "damping_ratio: 0.02", "damping_ratio: 1.0", 18, &["out of range", "less than 1"]),
    ]
}

/// Sentinel contents of the folders the tool writes, so that any write
/// shows.
fn plant_sentinels(root: &Path) {
    for (path, text) in [
        (
            "results/BP-1.yaml",
            "item: BP-1\n# written by an earlier run\n",
        ),
        ("results/summary.csv", "item,module\n"),
        ("package/TEST-001-A.pdf", "%PDF-1.7 earlier package\n"),
        ("package/TEST-001-A.typ", "= earlier package\n"),
        ("issued/A.yaml", "rev: A\n"),
    ] {
        let p = root.join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, text).expect("write sentinel");
    }
}

type Snapshots = [BTreeMap<PathBuf, Vec<u8>>; 3];

fn written_folders(root: &Path) -> Snapshots {
    ["results", "package", "issued"].map(|d| snapshot(&root.join(d)))
}

/// The assertions every bad input must pass, for one run of one verb.
fn assert_bad_input(what: &str, ran: &Ran, at: Option<(&str, u32)>, says: &[&str]) {
    let all = ran.all();
    assert!(
        !ran.stderr.contains("panicked"),
        "{what}: the tool panicked:\n{all}"
    );
    assert_eq!(ran.code, 2, "{what}: exit code 2 expected:\n{all}");
    if let Some((file, line)) = at {
        let place = format!("{file}:{line}:");
        assert!(
            all.contains(&place),
            "{what}: the message should name `{place}`:\n{all}"
        );
    }
    for s in says {
        assert!(
            all.contains(s),
            "{what}: the message should say `{s}`:\n{all}"
        );
    }
}

/// Builds the case's tree: the base files with the case's written over
/// them, minus what it leaves out, plus sentinel output folders.
fn make_tree(case: &Case) -> tempfile::TempDir {
    let dir = tree(&[]);
    let mut files: BTreeMap<&str, Vec<u8>> = base_files().into_iter().collect();
    for name in case.without {
        files.remove(name);
    }
    for (path, bytes) in &case.files {
        files.insert(path, bytes.clone());
    }
    for (path, bytes) in files {
        let p = dir.path().join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, bytes).expect("write");
    }
    plant_sentinels(dir.path());
    dir
}

#[test]
fn the_base_tree_is_good() {
    // Otherwise a case could fail for a reason other than its own.
    let dir = tree(&[]);
    let mut all_modules = base_files();
    all_modules.extend([
        ("transfers/tc.yaml", TC.as_bytes().to_vec()),
        ("transfers/bin.yaml", BIN.as_bytes().to_vec()),
        ("chain/pile.yaml", PILE.as_bytes().to_vec()),
        ("chain/brake.yaml", BRAKE.as_bytes().to_vec()),
        ("lifting/h.yaml", HOIST.as_bytes().to_vec()),
    ]);
    for (path, bytes) in all_modules {
        let p = dir.path().join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, bytes).expect("write");
    }
    let ran = packwright(dir.path(), &["run", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
    for id in ["BP-1", "TC-1", "BIN-1", "CH-1", "CH-2", "H-1"] {
        assert!(
            dir.path().join(format!("results/{id}.yaml")).is_file(),
            "{id}"
        );
    }
}

#[test]
fn corpus_of_bad_inputs() {
    let cases = cases();
    assert!(cases.len() >= 45, "the corpus has {} cases", cases.len());
    let mut names = std::collections::BTreeSet::new();
    for case in &cases {
        assert!(names.insert(case.name), "case `{}` twice", case.name);
        let dir = make_tree(case);
        let before = written_folders(dir.path());
        for verb in ["check", "build"] {
            let ran = packwright(dir.path(), &[verb, "."]);
            let what = format!("case `{}`, `packwright {verb}`", case.name);
            assert_bad_input(&what, &ran, Some(case.at), case.says);
            assert!(
                written_folders(dir.path()) == before,
                "{what}: results/, package/ or issued/ changed"
            );
        }
    }
}

/// A tree with the base files and the given extra files, sentinels planted.
fn base_tree(extra: &[(&str, &[u8])]) -> tempfile::TempDir {
    let dir = tree(&[]);
    for (path, bytes) in base_files()
        .iter()
        .map(|(p, b)| (*p, b.as_slice()))
        .chain(extra.iter().copied())
    {
        let p = dir.path().join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, bytes).expect("write");
    }
    plant_sentinels(dir.path());
    dir
}

/// Runs `check` and `build` on a bad tree and asserts what every bad input
/// must give; returns the build's output.
fn assert_refused(dir: &Path, at: Option<(&str, u32)>, says: &[&str]) -> String {
    let before = written_folders(dir);
    let mut out = String::new();
    for verb in ["check", "build"] {
        let ran = packwright(dir, &[verb, "."]);
        assert_bad_input(&format!("`packwright {verb}`"), &ran, at, says);
        assert!(
            written_folders(dir) == before,
            "{verb}: a written folder changed"
        );
        out.push_str(&ran.all());
    }
    out
}

#[cfg(unix)]
#[test]
fn symlink_loops_are_refused() {
    let dir = base_tree(&[]);
    std::os::unix::fs::symlink("b.yaml", dir.path().join("a.yaml")).expect("link");
    std::os::unix::fs::symlink("a.yaml", dir.path().join("b.yaml")).expect("link");
    // A folder link back up the tree is not followed (no endless walk).
    std::fs::create_dir_all(dir.path().join("sub")).expect("mkdir");
    std::os::unix::fs::symlink("..", dir.path().join("sub/up")).expect("link");
    assert_refused(
        dir.path(),
        Some(("a.yaml", 1)),
        &[
            "cannot open the file",
            "b.yaml:1:1",
            "a readable file inside the project folder",
        ],
    );
}

#[cfg(unix)]
#[test]
fn links_out_of_the_project_are_refused_and_not_shown() {
    let outside = tempfile::tempdir().expect("temp dir");
    let secret = "id: SECRET-OUTSIDE\nmodule: belt-pickup\n";
    std::fs::write(outside.path().join("elsewhere.yaml"), secret).expect("write");
    std::fs::create_dir_all(outside.path().join("folder")).expect("mkdir");
    std::fs::write(outside.path().join("folder/o.yaml"), secret).expect("write");
    let dir = base_tree(&[]);
    let link = |target: &Path, name: &str| {
        std::os::unix::fs::symlink(target, dir.path().join(name)).expect("link")
    };
    link(&outside.path().join("elsewhere.yaml"), "conveyors/out.yaml");
    link(Path::new("/etc/passwd"), "passwd.yaml");
    link(&outside.path().join("folder"), "linked-folder");
    let out = assert_refused(
        dir.path(),
        Some(("conveyors/out.yaml", 1)),
        &[
            "this file is a link to",
            "outside the project folder",
            "passwd.yaml:1:1",
            "linked-folder:1:1",
            "this folder is a link to",
            "expected: project files inside the project folder",
        ],
    );
    // The message must not print what lies outside the project.
    assert!(!out.contains("SECRET-OUTSIDE"), "{out}");
    assert!(!out.contains("root:"), "{out}");
}

#[cfg(unix)]
#[test]
fn a_project_yaml_linked_from_outside_is_refused() {
    let outside = tempfile::tempdir().expect("temp dir");
    std::fs::write(outside.path().join("project.yaml"), PROJECT).expect("write");
    let dir = base_tree(&[]);
    std::fs::remove_file(dir.path().join("project.yaml")).expect("remove");
    std::os::unix::fs::symlink(
        outside.path().join("project.yaml"),
        dir.path().join("project.yaml"),
    )
    .expect("link");
    assert_refused(
        dir.path(),
        Some(("project.yaml", 1)),
        &["outside the project folder"],
    );
}

#[test]
fn a_very_large_file_is_refused_before_it_is_parsed() {
    let mut big = BP.replace("id: BP-1", "id: BIG").into_bytes();
    big.extend(b"notes: >\n");
    while big.len() < 3 << 20 {
        big.extend(
            b"  a long line of notes that nobody will read, repeated until the file is big\n",
        );
    }
    let dir = base_tree(&[("conveyors/big.yaml", &big)]);
    assert_refused(
        dir.path(),
        Some(("conveyors/big.yaml", 1)),
        &[
            "bytes; packwright reads project files of at most 1048576 bytes",
            "expected: one calculation item per file",
        ],
    );
}

#[test]
fn a_file_of_thousands_of_unknown_keys_is_answered() {
    // Just under the size limit: every key is reported, each with its line,
    // and the work grows no faster than the file.
    let mut text = BP.to_string();
    let mut i = 0;
    while text.len() < 1_000_000 {
        text.push_str(&format!("  unknown_{i}: 1 m\n"));
        i += 1;
    }
    let dir = base_tree(&[("conveyors/bp.yaml", text.as_bytes())]);
    let out = assert_refused(
        dir.path(),
        Some(("conveyors/bp.yaml", 11)),
        &["`unknown_0` is not an input"],
    );
    assert!(out.contains(&format!("`unknown_{}` is not an input", i - 1)));
    assert!(out.contains(&format!("conveyors/bp.yaml:{}:", 10 + i)));
}

#[cfg(unix)]
#[test]
fn a_pipe_named_yaml_does_not_hang_the_tool() {
    let dir = base_tree(&[]);
    let fifo = dir.path().join("conveyors/pipe.yaml");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("mkfifo runs");
    assert!(made.success());
    assert_refused(
        dir.path(),
        Some(("conveyors/pipe.yaml", 1)),
        &["not a regular file"],
    );
}

#[test]
fn a_byte_order_mark_is_not_an_error() {
    let mut with_bom = b"\xEF\xBB\xBF".to_vec();
    with_bom.extend(BP.as_bytes());
    let dir = base_tree(&[("conveyors/bp.yaml", &with_bom)]);
    let ran = packwright(dir.path(), &["check", "."]);
    assert_eq!(ran.code, 0, "{}", ran.all());
}

#[test]
fn bad_input_after_a_good_build_keeps_that_build() {
    let dir = base_tree(&[]);
    for d in ["results", "package", "issued"] {
        std::fs::remove_dir_all(dir.path().join(d)).expect("remove sentinels");
    }
    let good = packwright(dir.path(), &["build", "."]);
    assert_eq!(good.code, 0, "{}", good.all());
    std::fs::write(
        dir.path().join("conveyors/bp.yaml"),
        edit(BP, "4.5 m/s", "4.5 kg"),
    )
    .expect("write");
    assert_refused(
        dir.path(),
        Some(("conveyors/bp.yaml", 6)),
        &["`kg` is a unit of a mass"],
    );
    assert!(dir.path().join("package/TEST-001-A.pdf").is_file());
}

/// A project whose good build is on disk, then a template override added.
fn built_then_overridden(name: &str, text: &[u8]) -> tempfile::TempDir {
    let dir = tree(&[]);
    for (path, bytes) in base_files() {
        let p = dir.path().join(path);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, bytes).expect("write");
    }
    let good = packwright(dir.path(), &["build", "."]);
    assert_eq!(good.code, 0, "{}", good.all());
    let p = dir.path().join("templates").join(name);
    std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
    std::fs::write(p, text).expect("write template");
    dir
}

/// `build` with a broken override: exit 2, the template named, nothing
/// written over the good build. (Templates are read by `build` only.)
fn assert_template_refused(dir: &Path, says: &[&str]) -> String {
    let before = written_folders(dir);
    let ran = packwright(dir, &["build", "."]);
    assert_bad_input("`packwright build`", &ran, None, says);
    assert!(
        written_folders(dir) == before,
        "a written folder changed:\n{}",
        ran.all()
    );
    ran.all()
}

#[test]
fn a_template_with_a_handlebars_error_is_refused() {
    let dir = built_then_overridden(
        "cover.typ.hbs",
        b"= Cover\n\n{{#if project.title}}\nnever closed\n",
    );
    assert_template_refused(
        dir.path(),
        &[
            "templates/cover.typ.hbs:5:",
            "template `cover`",
            "invalid handlebars syntax",
        ],
    );
    let dir = built_then_overridden(
        "summary.typ.hbs",
        b"= Summary\n\n{{project.no_such_field}}\n",
    );
    assert_template_refused(
        dir.path(),
        &["templates/summary.typ.hbs:3:", "no_such_field"],
    );
}

#[test]
fn a_template_with_a_typst_error_is_refused() {
    let dir = built_then_overridden("cover.typ.hbs", b"= Cover\n\n#let x = (1,\n");
    assert_template_refused(
        dir.path(),
        &[
            // The template's own file and line, then the generated line.
            "templates/cover.typ.hbs:3:",
            "template `cover`",
            "does not typeset",
            "unclosed delimiter",
            "at line",
        ],
    );
    let dir = built_then_overridden(
        "modules/belt-pickup.typ.hbs",
        b"== {{item.id}}\n#no-such-function()\n",
    );
    assert_template_refused(
        dir.path(),
        &[
            "templates/modules/belt-pickup.typ.hbs:2:",
            "section of item `BP-1`",
            "unknown variable: no-such-function",
        ],
    );
}

#[test]
fn a_template_cannot_read_outside_the_package() {
    let dir = built_then_overridden("cover.typ.hbs", b"= Cover\n#read(\"/etc/passwd\")\n");
    let out = assert_template_refused(dir.path(), &["templates/cover.typ.hbs", "does not typeset"]);
    assert!(!out.contains("root:"), "{out}");
}

#[test]
fn a_template_cannot_reach_the_network_or_files_beside_the_project() {
    // A Typst package would be downloaded by the Typst command line; the
    // package world has no packages and no network.
    let dir = built_then_overridden(
        "cover.typ.hbs",
        b"#import \"@preview/cetz:0.3.4\": canvas\n= Cover\n",
    );
    assert_template_refused(
        dir.path(),
        &[
            "templates/cover.typ.hbs:1:",
            "does not typeset",
            "packages are not available",
        ],
    );
    // A project file beside the package folder is outside the sandbox.
    let dir = built_then_overridden("cover.typ.hbs", b"= Cover\n#read(\"../project.yaml\")\n");
    let out = assert_template_refused(
        dir.path(),
        &["templates/cover.typ.hbs:2:", "does not typeset"],
    );
    assert!(!out.contains("revisions:"), "{out}");
}

#[test]
fn other_bad_templates_are_refused() {
    let dir = built_then_overridden("cuver.typ.hbs", b"= Cover\n");
    assert_template_refused(
        dir.path(),
        &[
            "templates/cuver.typ.hbs",
            "no built-in template is called `cuver`",
            "known templates: preamble, page-furniture, cover",
        ],
    );
    let dir = built_then_overridden("cover.typ.hbs", b"= Cover \xFF\n");
    assert_template_refused(
        dir.path(),
        &["templates/cover.typ.hbs", "must be UTF-8 text"],
    );
}

#[cfg(unix)]
#[test]
fn a_template_linked_from_outside_is_refused() {
    let dir = built_then_overridden("cover.typ.hbs", b"= Cover\n");
    let template = dir.path().join("templates/cover.typ.hbs");
    std::fs::remove_file(&template).expect("remove");
    std::os::unix::fs::symlink("/etc/passwd", &template).expect("link");
    let out = assert_template_refused(
        dir.path(),
        &[
            "templates/cover.typ.hbs",
            "outside the project's templates folder",
        ],
    );
    assert!(!out.contains("root:"), "{out}");
}
