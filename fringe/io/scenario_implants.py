"""Scenario section ``[[implant_condition]]``: labelled conditions of implants.

One table per labelled condition (docs/implants.md)::

    [[implant_condition]]
    name = "conditional pump, 1.5 T label"   # any label
    max_field_T = 1.5                         # static field, T
    max_grad_abs_B_T_per_m = 19.0             # optional: spatial field gradient, T/m
    max_force_product_T2_per_m = 28.0         # optional: |B|·|∇|B||, T²/m

The parsed section (``Site.implant_conditions``) is a tuple of
:class:`fringe.model.site.ImplantCondition`.
"""

from __future__ import annotations

from fringe.io.reader import Reader
from fringe.model.site import ImplantCondition

__all__ = ["parse_implant_conditions", "SECTION_KEY"]

#: Top-level scenario key of this section.
SECTION_KEY: str = "implant_condition"


def parse_implant_conditions(root: Reader) -> tuple[ImplantCondition, ...]:
    """Parse every ``[[implant_condition]]`` table; names must be unique."""
    out: list[ImplantCondition] = []
    seen: set[str] = set()
    for r in root.tables(SECTION_KEY):
        name = r.string("name")
        if name in seen:
            r.fail(r.key("name"), "unique among [[implant_condition]] tables", name)
        seen.add(name)
        out.append(ImplantCondition(
            name=name,
            max_field_T=r.number("max_field_T", low=0.0, low_open=True, high=30.0),
            max_grad_abs_B_T_per_m=r.number("max_grad_abs_B_T_per_m", None, low=0.0,
                                            low_open=True),
            max_force_product_T2_per_m=r.number("max_force_product_T2_per_m", None, low=0.0,
                                                low_open=True)))
        r.finish()
    return tuple(out)
