"""Tests of the skirt-seal external module, against hand calculations.

Run from this folder with `python3 -m unittest` (packwright's Rust test
suite runs it too: tests/tests/external.rs).
"""

import json
import os
import subprocess
import sys
import unittest

import seal_drag

HERE = os.path.dirname(os.path.abspath(__file__))

# Exact definitions (NIST SP 811, appendix B): 1 ft = 0.3048 m, 1 lbf = 4.4482216152605 N.
FOOT = 0.3048
LBF = 4.4482216152605


def q(value, dimension):
    return {"value": value, "dimension": dimension}


def request(**inputs):
    base = {
        "skirt_length": q(20 * FOOT, "length"),
        "sealed_sides": {"count": 2},
        "seal_drag": q(3 * LBF / FOOT, "force_per_length"),
        "belt_speed": q(2.5, "velocity"),
        "acceleration_length": q(0.0, "length"),
    }
    base.update(inputs)
    return {"protocol": 1, "module": "skirt-seal", "version": "1.0.0", "item": "T-1",
            "inputs": base, "criteria": {}}


class SealDrag(unittest.TestCase):
    def test_cema_seal_figure_on_both_sides(self):
        # CEMA (from memory): 3 lbf per foot of each seal strip. 20 ft of skirt,
        # two sides: 3 * 20 * 2 = 120 lbf.
        out = seal_drag.calculate(request())["outputs"]
        self.assertAlmostEqual(out["seal_drag_force"]["value"], 120 * LBF, places=9)
        self.assertAlmostEqual(out["skirt_resistance"]["value"], 120 * LBF, places=9)
        self.assertAlmostEqual(out["skirt_power"]["value"], 120 * LBF * 2.5, places=9)
        self.assertNotIn("material_skirt_force", out)

    def test_one_side(self):
        out = seal_drag.calculate(request(sealed_sides={"count": 1}))["outputs"]
        self.assertAlmostEqual(out["seal_drag_force"]["value"], 60 * LBF, places=9)

    def test_material_friction_beyond_the_acceleration_area(self):
        # ISO 5048:1989 skirt-plate friction beyond the acceleration area,
        # F = mu2 * Iv^2 * rho * g * l / (v^2 * b1^2), Iv = m_dot / rho.
        # Hand calculation: m_dot = 1000 kg/s, rho = 2000 kg/m3, v = 2.5 m/s,
        # b1 = 1.0 m -> h = 1000 / (2000 * 2.5 * 1.0) = 0.2 m;
        # mu2 = 0.5, l = 10 m - 2 m = 8 m:
        # F = 0.5 * 2000 * 9.80665 * 0.2^2 * 8 = 3138.128 N.
        resp = seal_drag.calculate(request(
            skirt_length=q(10.0, "length"),
            acceleration_length=q(2.0, "length"),
            mass_flow=q(1000.0, "mass_rate"),
            bulk_density=q(2000.0, "density"),
            skirt_friction=q(0.5, "dimensionless"),
            skirt_width=q(1.0, "length"),
        ))
        out = resp["outputs"]
        self.assertAlmostEqual(out["burden_depth"]["value"], 0.2, places=12)
        self.assertAlmostEqual(out["material_skirt_force"]["value"], 3138.128, places=6)
        iso = 0.5 * (1000.0 / 2000.0) ** 2 * 2000.0 * 9.80665 * 8.0 / (2.5 ** 2 * 1.0 ** 2)
        self.assertAlmostEqual(out["material_skirt_force"]["value"], iso, places=6)
        seals = 2 * 3 * LBF / FOOT * 10.0
        self.assertAlmostEqual(out["skirt_resistance"]["value"], seals + 3138.128, places=6)

    def test_acceleration_area_longer_than_the_skirt_adds_no_material_friction(self):
        resp = seal_drag.calculate(request(
            skirt_length=q(3.0, "length"),
            acceleration_length=q(4.0, "length"),
            mass_flow=q(1000.0, "mass_rate"),
            bulk_density=q(2000.0, "density"),
            skirt_friction=q(0.5, "dimensionless"),
            skirt_width=q(1.0, "length"),
        ))
        self.assertEqual(resp["outputs"]["material_skirt_force"]["value"], 0.0)
        self.assertTrue(any("acceleration area" in n for n in resp["notes"]))

    def test_part_of_the_material_inputs_is_an_input_error(self):
        resp = seal_drag.respond(request(mass_flow=q(1000.0, "mass_rate")))
        self.assertEqual(resp["error"]["kind"], "input")
        self.assertEqual(resp["error"]["input"], "bulk_density")
        self.assertIn("skirt_width", resp["error"]["message"])

    def test_the_check_against_the_allowance(self):
        req = request()
        power = 120 * LBF * 2.5
        req["criteria"] = {"max_skirt_power": q(power * 0.9, "power")}
        check = seal_drag.calculate(req)["checks"][0]
        self.assertEqual((check["name"], check["status"]), ("skirt_power_within_allowance", "fail"))
        req["criteria"] = {"max_skirt_power": q(power * 1.1, "power")}
        self.assertEqual(seal_drag.calculate(req)["checks"][0]["status"], "pass")

    def test_the_program_speaks_the_protocol(self):
        # The script as packwright runs it: one request in, one response out.
        done = subprocess.run([sys.executable, "seal_drag.py"], cwd=HERE,
                              input=json.dumps(request()), capture_output=True, text=True,
                              check=True)
        resp = json.loads(done.stdout)
        self.assertEqual(resp["protocol"], 1)
        self.assertEqual(set(resp["outputs"]),
                         {"seal_drag_force", "skirt_resistance", "skirt_power"})
        self.assertEqual(done.stderr, "")


if __name__ == "__main__":
    unittest.main()
