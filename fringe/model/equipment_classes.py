"""Classes of field-sensitive equipment and the static field each tolerates.

One registry, :data:`EQUIPMENT_CLASSES`: a scenario's ``[[equipment]] class = "…"`` fills
``limit_mT`` from it (an explicit ``limit_mT`` overrides). The values are the static
fields at which such equipment is commonly kept in MR siting; the supplier's own data for
the installed unit govern.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["EquipmentClass", "EQUIPMENT_CLASSES", "NO_SOURCE"]

#: The source given where no published source states the value.
NO_SOURCE: str = "common practice, no source"


@dataclass(frozen=True)
class EquipmentClass:
    """A class of field-sensitive equipment.

    Attributes
    ----------
    name : str
        The registry key (what a scenario writes as ``class``).
    limit_mT : float
        Largest static field tolerated, mT.
    description : str
    source : str
        Where the value comes from, or :data:`NO_SOURCE`.
    """

    name: str
    limit_mT: float
    description: str
    source: str = NO_SOURCE


def _registry(*classes: EquipmentClass) -> dict[str, EquipmentClass]:
    return {c.name: c for c in classes}


#: Every equipment class, by name. The values follow the siting guidance commonly quoted
#: for MR suites (equipment near 0.1 mT: image intensifiers and gamma cameras; 0.5 mT:
#: CT, PET, linear accelerators; 1 mT: computers and ordinary electronics; 3 mT: x-ray
#: tubes and disk storage); no single published source gives them.
EQUIPMENT_CLASSES: dict[str, EquipmentClass] = _registry(
    EquipmentClass("gamma camera", 0.1, "gamma camera or SPECT (photomultiplier tubes)"),
    EquipmentClass("image intensifier", 0.1, "x-ray image intensifier or fluoroscopy unit"),
    EquipmentClass("electron microscope", 0.1, "transmission or scanning electron microscope"),
    EquipmentClass("PET scanner", 0.5, "positron emission tomograph (photomultiplier or "
                                       "solid-state detectors)"),
    EquipmentClass("CT scanner", 0.5, "x-ray computed tomography gantry"),
    EquipmentClass("linear accelerator", 0.5, "radiotherapy linear accelerator"),
    EquipmentClass("ultrasound", 1.0, "ultrasound scanner"),
    EquipmentClass("computer", 1.0, "computers, monitors and ordinary electronics"),
    EquipmentClass("x-ray tube", 3.0, "x-ray tube and generator"),
    EquipmentClass("disk storage", 3.0, "magnetic disk storage, credit cards, watches"),
)
