"""Make fringe/data/demo_readings.csv: invented survey readings for the invented demo site.

Run from the repository root: python docs/examples/make_demo_readings.py
The truth is invented (currents x 0.97, centre moved by (+0.04, -0.02, 0) m, an Earth's
field (0, 19, -45) uT, 2 % noise, two faults); docs/survey.md.
"""
import numpy as np

from fringe.field.evaluate import field_at
from fringe.io.scenario import load_site

site = load_site("fringe/data/demo_site.toml")
m = site.magnets[0]
truth = m.scaled(0.97).moved(center_m=np.array(m.center_m) + [0.04, -0.02, 0.0])
rng = np.random.default_rng(7)
pts = [
 # label, x, y, z, note
 ("MR-01", 2.0, 4.0, 1.0, "magnet room, west wall, on the axis"),
 ("MR-02", 1.0, 4.0, 1.0, "magnet room, west wall"),
 ("MR-03", 8.0, 4.0, 1.0, "magnet room, on the axis, east"),
 ("MR-04", 9.0, 4.0, 1.0, "magnet room, east wall"),
 ("MR-05", 5.0, 1.5, 1.0, "magnet room, south of the isocentre"),
 ("MR-06", 5.0, 0.5, 1.0, "magnet room, south wall"),
 ("MR-07", 5.0, 6.5, 1.0, "magnet room, north of the isocentre"),
 ("MR-08", 5.0, 7.5, 1.0, "magnet room, door"),
 ("MR-09", 3.0, 2.0, 1.5, "magnet room, south-west"),
 ("MR-10", 7.5, 6.0, 1.5, "magnet room, north-east"),
 ("MR-11", 7.0, 2.0, 0.5, "magnet room, south-east, low"),
 ("MR-12", 3.0, 6.5, 0.5, "magnet room, north-west, low"),
 ("MR-13", 6.5, 5.5, 1.8, "magnet room, high"),
 ("MR-14", 3.5, 2.5, 1.8, "magnet room, high"),
 ("CR-01", 10.0, 5.0, 1.0, "control room, window"),
 ("CR-02", 11.5, 6.0, 1.0, "control room, desk"),
 ("ER-01", 10.0, 2.0, 1.0, "equipment room"),
 ("CO-01", 5.0, 8.5, 1.0, "corridor, outside the door"),
 ("CO-02", 2.0, 9.0, 1.0, "corridor"),
 ("CT-01", -0.5, 4.0, 1.0, "CT room, shared wall"),
 ("CT-02", -1.5, 3.0, 1.0, "CT room, by the gantry"),
 ("OF-01", 5.0, 4.0, 4.8, "first-floor office, above the isocentre"),
 ("OF-02", 7.5, 4.0, 4.8, "first-floor office"),
 ("PL-01", 5.0, 4.0, -2.5, "plant room, below the isocentre"),
 ("PL-02", 3.0, 4.0, -2.5, "plant room"),
 ("MR-15", 6.0, 2.0, 1.0, "magnet room, next to the steel door frame"),
 ("MR-16", 4.0, 6.5, 1.0, "magnet room"),
 ("MR-17", 2.5, 5.0, 1.2, "magnet room"),
 ("MR-18", 8.5, 2.5, 1.2, "magnet room"),
 ("MR-19", 7.0, 7.0, 1.0, "magnet room"),
]
P = np.array([[x, y, z] for _, x, y, z, _ in pts])
EARTH = np.array([0.0, 19e-6, -45e-6])  # invented: mid-latitude, north and down
b = np.linalg.norm(field_at(truth, P) + EARTH, axis=1) * np.exp(rng.normal(0, 0.02, len(P)))
# invented faults: a gross error next to steel (MR-15) and a misplaced probe (CO-02, read about
# 1.6 m from the recorded position, closer to the magnet)
i = [p[0] for p in pts].index("MR-15")
b[i] *= 1.45
j = [p[0] for p in pts].index("CO-02")
b[j] = np.linalg.norm(field_at(truth, [[3.0, 7.8, 1.0]]) + EARTH)
unc = 0.02 * b


def sig(v, n=4):
    return float(f"{v:.{n}g}")


lines = ["# Invented survey readings for the invented demo site (fringe/data/demo_site.toml).",
 "# Not a real survey: made from the demo model with every current scaled by 0.97 and the",
 "# centre moved by (+0.04, -0.02, 0) m, plus an invented Earth's field (0, 19, -45) uT in the",
 "# site frame (as a meter reads the total field), with 2 % random noise (normal in ln|B|); two",
 "# faults put in on purpose: MR-15 reads 45 % high (steel the model lacks) and CO-02 was",
 "# taken about 1.6 m from the position recorded (a misplaced probe). docs/survey.md.",
 "# Columns: position in the site frame (m), |B| read (mT), the meter's standard",
 "# uncertainty (mT), a label and a note.",
 "label,x_m,y_m,z_m,B_mT,uncertainty_mT,note"]
for (lab, x, y, z, note), bi, ui in zip(pts, b, unc, strict=True):
    lines.append(f"{lab},{x:g},{y:g},{z:g},{sig(bi*1e3)},{sig(ui*1e3, 2)},\"{note}\"")
open("fringe/data/demo_readings.csv", "w").write("\n".join(lines) + "\n")
