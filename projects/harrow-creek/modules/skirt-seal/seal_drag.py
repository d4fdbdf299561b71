#!/usr/bin/env python3
"""External packwright module `skirt-seal` (protocol 1): drag of the rubber
skirt seals along a skirtboard, plus the friction of the material on the
skirt plates beyond the acceleration area.

packwright writes one JSON request to standard input and reads one JSON
response from standard output; every value is in SI coherent units. The
declaration (inputs, outputs, method, references) is in module.yaml beside
this file. Standard library only, so it runs wherever Python 3 does.
"""

import json
import sys

PROTOCOL = 1

# Standard gravity, m/s2 (exact by the 3rd CGPM, 1901).
G = 9.80665

# The inputs that together add the material's friction on the skirt plates.
MATERIAL_TERM = ("mass_flow", "bulk_density", "skirt_friction", "skirt_width")


class InputError(Exception):
    """An input (or a combination of inputs) the method cannot use."""

    def __init__(self, name, message, expected):
        super().__init__(message)
        self.name = name
        self.message = message
        self.expected = expected


def si(inputs, name):
    """The SI value of an input, or None when the item left it out."""
    entry = inputs.get(name)
    if entry is None:
        return None
    if "value" in entry:
        return float(entry["value"])
    if "count" in entry:
        return float(entry["count"])
    raise InputError(name, "`%s` arrived in a form this module does not read" % name,
                     "a quantity or a count")


def measure(value, dimension):
    return {"value": value, "dimension": dimension}


def calculate(request):
    """The response for one request (a dict in, a dict out)."""
    inputs = request["inputs"]
    criteria = request.get("criteria", {})
    skirt_length = si(inputs, "skirt_length")
    sides = si(inputs, "sealed_sides")
    seal_drag = si(inputs, "seal_drag")
    belt_speed = si(inputs, "belt_speed")
    acceleration_length = si(inputs, "acceleration_length") or 0.0

    outputs = {}
    notes = []
    seal_force = sides * seal_drag * skirt_length
    outputs["seal_drag_force"] = measure(seal_force, "force")

    given = [name for name in MATERIAL_TERM if name in inputs]
    material_force = 0.0
    if given and len(given) < len(MATERIAL_TERM):
        missing = [name for name in MATERIAL_TERM if name not in inputs]
        raise InputError(
            missing[0],
            "the material's friction on the skirt plates needs %s as well as %s"
            % (", ".join(missing), ", ".join(given)),
            "all four of mass_flow, bulk_density, skirt_friction and skirt_width "
            "(a `material:` gives the density and friction), or none of them",
        )
    if given:
        mass_flow = si(inputs, "mass_flow")
        density = si(inputs, "bulk_density")
        friction = si(inputs, "skirt_friction")
        width = si(inputs, "skirt_width")
        depth = mass_flow / (density * belt_speed * width)
        beyond = max(skirt_length - acceleration_length, 0.0)
        if acceleration_length >= skirt_length:
            notes.append(
                "The acceleration area (%.3g m) reaches the end of the skirt (%.3g m): "
                "the material's friction on the skirt plates is all in the loading "
                "calculation, none is added here." % (acceleration_length, skirt_length))
        material_force = friction * density * G * depth ** 2 * beyond
        outputs["burden_depth"] = measure(depth, "length")
        outputs["material_skirt_force"] = measure(material_force, "force")
    else:
        notes.append(
            "Seal drag only: the item gives no mass flow, density, skirt friction and "
            "skirt width, so the material's friction on the skirt plates is not included.")

    resistance = seal_force + material_force
    power = resistance * belt_speed
    outputs["skirt_resistance"] = measure(resistance, "force")
    outputs["skirt_power"] = measure(power, "power")

    checks = []
    allowance = criteria.get("max_skirt_power")
    if allowance is not None:
        limit = float(allowance["value"])
        passed = power <= limit
        checks.append({
            "name": "skirt_power_within_allowance",
            "status": "pass" if passed else "fail",
            "value": measure(power, "power"),
            "limit": measure(limit, "power"),
            "relation": "at_most",
            "explanation": (
                "The skirt takes %.3g kW of the drive's power, %s the %.3g kW allowed for it."
                % (power / 1e3, "within" if passed else "more than", limit / 1e3)),
        })

    # Resistance built up along the skirt, from its loading end.
    start = min(acceleration_length, skirt_length)
    material_per_metre = material_force / (skirt_length - start) if skirt_length > start else 0.0
    stations = sorted({0.0, start, skirt_length})
    seal_line = [[x, sides * seal_drag * x] for x in stations]
    total_line = [[x, sides * seal_drag * x + material_per_metre * max(x - start, 0.0)]
                  for x in stations]
    layers = [{"label": "seal strips", "style": "dashed", "points": seal_line}]
    if given:
        layers.append({"label": "seals and material", "style": "line", "points": total_line})
        if 0.0 < start < skirt_length:
            layers.append({"label": "end of acceleration area", "style": "reference",
                           "points": [[start, 0.0], [start, resistance]]})
    plot = {
        "id": "skirt-resistance",
        "title": "Skirt resistance built up along the skirt",
        "x": {"label": "distance from the loading end of the skirt", "dimension": "length"},
        "y": {"label": "skirt resistance", "dimension": "force"},
        "layers": layers,
    }
    return {"protocol": PROTOCOL, "outputs": outputs, "checks": checks,
            "plots": [plot], "notes": notes}


def respond(request):
    """The response, or an `error` answer for inputs the method cannot use."""
    if request.get("protocol") != PROTOCOL:
        raise SystemExit("skirt-seal speaks protocol %d, packwright sent %r"
                         % (PROTOCOL, request.get("protocol")))
    try:
        return calculate(request)
    except InputError as e:
        return {"protocol": PROTOCOL, "error": {
            "kind": "input", "input": e.name, "message": e.message, "expected": e.expected}}
    except ZeroDivisionError as e:
        return {"protocol": PROTOCOL, "error": {
            "kind": "numerical", "quantity": "skirt resistance", "message": str(e),
            "inputs": sorted(request["inputs"])}}


def main():
    request = json.load(sys.stdin)
    # allow_nan=False: a NaN must fail here, loudly, not reach a result file.
    json.dump(respond(request), sys.stdout, allow_nan=False, sort_keys=True)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
