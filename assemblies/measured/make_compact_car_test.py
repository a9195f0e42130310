"""Make the invented "measured" modes of the compact car (a demonstration file).

No test was run: the file comes from a changed copy of
assemblies/compact_car.yaml (front springs +9 %, rear springs -7 %, tyres
+6 %, engine mount rate -12 %), its modes taken at 20 point-directions,
with 3 % complex noise on the shapes, 0.4 % on the frequencies and 10 % on
the damping ratios (fixed seed), 8 of its 10 modes kept. Run from the
repository root:

    python3 assemblies/measured/make_compact_car_test.py
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from builder.analysis.correlation import simulate_test  # noqa: E402
from builder.linear import assemble  # noqa: E402
from builder.load import load_assembly  # noqa: E402
from builder.measured import measured_csv_text  # noqa: E402
from builder.quantities import STIFFNESS, Quantity  # noqa: E402

CHANGES = {"ks_front": 24e3 * 1.09, "ks_rear": 21e3 * 0.93, "kt": 220e3 * 1.06,
           "mount_z": 250e3 * 0.88}

POINTS = {   # name: (body, point in m, ISO 8855 axes, origin at the front axle on the ground)
    "sill_fl": ("body", [-0.15, 0.70, 0.35]), "sill_fr": ("body", [-0.15, -0.70, 0.35]),
    "sill_rl": ("body", [-2.45, 0.70, 0.35]), "sill_rr": ("body", [-2.45, -0.70, 0.35]),
    "floor_c": ("body", [-1.20, 0.00, 0.30]), "tunnel": ("body", [-0.60, 0.00, 0.40]),
    "roof_f": ("body", [-0.90, 0.40, 1.35]), "roof_r": ("body", [-1.90, -0.40, 1.30]),
    "boot": ("body", [-3.10, 0.00, 0.70]), "bumper": ("body", [0.70, 0.00, 0.45]),
    "eng_fl": ("engine", [0.45, 0.25, 0.75]), "eng_fr": ("engine", [0.45, -0.25, 0.75]),
    "eng_r": ("engine", [0.10, 0.00, 0.70]),
    "hub_fl": ("wheel_fl", [0.0, 0.74, 0.30]), "hub_fr": ("wheel_fr", [0.0, -0.74, 0.30]),
    "hub_rl": ("wheel_rl", [-2.60, 0.73, 0.30]), "hub_rr": ("wheel_rr", [-2.60, -0.73, 0.30]),
}
CHANNELS = [(p, "z") for p in POINTS] + [("roof_f", "y"), ("roof_r", "x"), ("eng_fl", "x")]
MODES = [1, 2, 3, 4, 5, 7, 8, 10]

TITLE = ("INVENTED DATA, not a test: modes of a changed copy of compact_car.yaml plus noise, "
         "made by assemblies/measured/make_compact_car_test.py for the demonstration")


def main() -> None:
    over = {k: Quantity(v, STIFFNESS) for k, v in CHANGES.items()}
    model = assemble(load_assembly(ROOT / "assemblies" / "compact_car.yaml", overrides=over))
    test = simulate_test(model, POINTS, CHANNELS, MODES, shape_noise=0.03,
                         frequency_noise=0.004, damping_noise=0.10, seed=2026, title=TITLE)
    out = ROOT / "assemblies" / "measured" / "compact_car_test.csv"
    out.write_text(measured_csv_text(test))
    print(f"wrote {out}: {len(test)} modes at {len(test.channels)} channels")


if __name__ == "__main__":
    main()
