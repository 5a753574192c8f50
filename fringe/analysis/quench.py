"""The quench release budget of one magnet of a site.

What a site asks of :mod:`fringe.physics.quench`: the stored energy and circuit
inductance of the magnet (:mod:`fringe.physics.energy`) and the inputs of its
``[[quench]]`` table (or of ``fringe quench`` options) give a
:class:`~fringe.physics.quench.QuenchBudget`. Two steps of room conditions stay
distinct: :func:`room_conditions` fills in the defaults of the inputs (°C, kPa);
:func:`fringe.physics.quench.room_conditions_K_Pa` turns them into the SI key of the
helium look-up.

A magnet fitted to data-sheet numbers is budgeted with the model of its fit spread that
stores the most energy (:func:`fringe.analysis.fit_spread.largest_energy_magnet`;
docs/fit.md): the data sheet does not fix the energy, and the budget takes the worst
model that meets it.
"""

from __future__ import annotations

from fringe.analysis.fit_spread import largest_energy_magnet
from fringe.model.errors import FringeInputError, ScenarioError
from fringe.physics.energy import circuit_inductance_H, stored_energy_J
from fringe.physics.quench import QuenchBudget, quench_budget

__all__ = ["room_conditions", "budget_for_site"]

#: Room conditions of a budget whose inputs give none: 20 °C, 101.325 kPa.
DEFAULT_ROOM_TEMPERATURE_C: float = 20.0
DEFAULT_ROOM_PRESSURE_KPA: float = 101.325


def room_conditions(q) -> tuple[float, float]:
    """Room temperature (°C) and pressure (kPa) of the quench inputs ``q``, defaults
    filled in.

    Parameters
    ----------
    q : QuenchInputs
        Anything with ``room_temperature_C`` and ``room_pressure_kPa`` (float or None).

    Returns
    -------
    tuple of float
        (°C, kPa).
    """
    return (DEFAULT_ROOM_TEMPERATURE_C if q.room_temperature_C is None
            else float(q.room_temperature_C),
            DEFAULT_ROOM_PRESSURE_KPA if q.room_pressure_kPa is None
            else float(q.room_pressure_kPa))


def budget_for_site(site, q) -> QuenchBudget:
    """Compute the budget of ``q.magnet``: W and L from :mod:`fringe.physics.energy`.

    Parameters
    ----------
    site : Site
        The loaded scenario holding magnet ``q.magnet``.
    q : QuenchInputs
        The budget's inputs (``helium_L`` and ``room_volume_m3`` given).

    Returns
    -------
    QuenchBudget

    Raises
    ------
    ScenarioError
        For an input :func:`fringe.physics.quench.quench_budget` refuses (naming the
        scenario file).
    """
    # a data-sheet magnet: the model of its fit spread with the largest stored energy
    magnet = largest_energy_magnet(site.magnet(q.magnet))
    w = stored_energy_J(magnet)
    inductance = refused = current = None
    if q.dump_ohm is not None:
        inductance = circuit_inductance_H(magnet)
        if inductance is None:
            refused = (f"magnet {q.magnet!r}: the windings carry different current "
                       "magnitudes, so it is not one series circuit with one inductance; "
                       "the dump-resistor decay is not computed")
        else:
            current = abs(float(magnet.coils[0].current_A))  # the common |current|
    t_c, p_kpa = room_conditions(q)
    try:
        return quench_budget(
            w, q.helium_L, q.room_volume_m3,
            room_temperature_C=t_c, room_pressure_kPa=p_kpa,
            dump_ohm=q.dump_ohm, inductance_H=inductance, initial_current_A=current,
            magnet_resistance_ohm=q.magnet_resistance_ohm or 0.0,
            dump_refused_reason=refused or "", magnet=q.magnet)
    except FringeInputError as e:
        raise ScenarioError(str(e), site.source_file or None) from None
