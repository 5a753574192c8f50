"""The fit spread of the demo magnet's own lines, as a data sheet would print them.

Run:  python docs/examples/fit_spread_demo.py        (about a minute)

Fits the demo magnet's 0.5 mT line (and then also its 1 mT and 3 mT lines), rounded to
0.1 m, and prints the spread of the 0.1 / 0.5 / 1 / 3 mT lines, the attraction zone and the
stored energy over every model that meets the numbers within their rounding, beside the
demo magnet's own figures (docs/fit.md, "The spread of a data-sheet fit").
"""

from __future__ import annotations

import warnings
from importlib import resources

from fringe.analysis.fit_spread import magnet_fit_spread
from fringe.field.extents import threshold_extents_m
from fringe.io.scenario import load_site
from fringe.io.scenario_datasheet import rounding_of
from fringe.model.magnet import DataSheet, Magnet
from fringe.physics.attraction import attraction_extents_m
from fringe.physics.energy import stored_energy_J
from fringe.physics.families import FAMILIES
from fringe.physics.fit import fit_magnet

THRESHOLDS_MT = (0.1, 0.5, 1.0, 3.0)
CASES = {"0.5 mT": [(5e-4, 3.9, 2.1)],
         "0.5 + 3 mT": [(5e-4, 3.9, 2.1), (3e-3, 2.8, 1.9)],
         "0.5 + 1 + 3 mT": [(5e-4, 3.9, 2.1), (1e-3, 3.4, 2.0), (3e-3, 2.8, 1.9)]}


def main() -> None:
    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        truth = load_site(p).magnets[0]
    print("demo magnet:", {t: tuple(round(v, 2) for v in threshold_extents_m(truth, t * 1e-3))
                           for t in THRESHOLDS_MT},
          "attraction", tuple(round(v, 2) for v in attraction_extents_m(truth)),
          f"energy {stored_energy_J(truth) / 1e6:.2f} MJ")
    for name, lines in CASES.items():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = fit_magnet(1.5, lines, shielded=True, bore_m=0.6)
        shape = FAMILIES[res.family].fit
        sheet = DataSheet(1.5, rounding_of(1.5), True, 0.6, tuple(lines),
                          tuple((rounding_of(a), rounding_of(r)) for _, a, r in lines),
                          res.family, tuple(res.parameters[k] for k in shape.parameters),
                          res.a_min_m)
        magnet = Magnet("data sheet", (0, 0, 0), (0, 0, 1), res.magnet.coils, datasheet=sheet)
        sp = magnet_fit_spread(magnet, THRESHOLDS_MT).to_dict()
        print(f"\n{name}: {sp['models']} models")
        for b in sp["boundaries"]:
            print(f"  {b['threshold_mT']:g} mT line: along {b['axial_extent_m']} m, "
                  f"across {b['radial_extent_m']} m")
        print(f"  attraction zone: along {sp['attraction_axial_extent_m']} m, "
              f"across {sp['attraction_radial_extent_m']} m")
        print(f"  stored energy: {[round(v / 1e6, 3) for v in sp['stored_energy_J']]} MJ")


if __name__ == "__main__":
    main()
