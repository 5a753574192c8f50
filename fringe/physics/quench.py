"""Quench release budget: helium boil-off, gas volume, room oxygen, dump-resistor decay.

Three layers, as everywhere in fringe:

1. kernels — small pure numpy functions of numbers in SI units (``boiloff_mass_kg``,
   ``oxygen_fraction_after_release``, ``dump_current_A`` …), no validation;
2. :func:`helium_properties` — the helium data, every value from CoolProp (no
   hand-typed property tables);
3. :func:`quench_budget` — checks its inputs and returns a frozen :class:`QuenchBudget`.

Nothing here imports plotting or the CLI. The sheets for the PDF report are built from
:func:`budget_table_rows` and :func:`dump_decay_curves` by :mod:`fringe.render.quench`.

Every result is an advisory estimate (:data:`fringe.model.constants.ADVISORY_NOTICE`); the
cautions printed with it are in :data:`QUENCH_CAUTIONS`.

References
----------
.. [1] CoolProp: I. H. Bell, J. Wronski, S. Quoilin, V. Lemort, "Pure and Pseudo-pure
   Fluid Thermophysical Property Evaluation and the Open-Source Thermophysical
   Property Library CoolProp", Ind. Eng. Chem. Res. 53 (2014) 2498-2508,
   doi:10.1021/ie4033999. Helium-4 equation of state in its HEOS backend: D. O.
   Ortiz-Vega, K. R. Hall, J. C. Holste, V. D. Arp, A. H. Harvey, E. W. Lemmon,
   "Equation of state for helium-4" (coefficients as in NIST REFPROP 10; CoolProp
   bibliography key ``OrtizVega-JPCRD-2019``).
.. [2] Fermilab ES&H Manual (FESHM) chapter 4240, "Oxygen Deficiency Hazards (ODH)",
   section 6.1.A: with no ventilation the oxygen fraction after a release of gas at a
   volume rate R for a time t into a space of volume V is C = 0.21·exp(-R·t/V). Read
   through the open implementation ``conc_vent`` of github.com/srgkoshelev/ODH_analysis
   (which cites FESHM 4240 6.1.A), not from the manual itself.
.. [3] US OSHA 29 CFR 1910.146(b): "Oxygen deficient atmosphere means an atmosphere
   containing less than 19.5 percent oxygen by volume."
.. [4] M. N. Wilson, *Superconducting Magnets*, Oxford University Press (1983),
   ch. 9 (quenching and protection: external dump resistor, I = I0·exp(-t·R/L)).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from functools import lru_cache
from importlib import resources

import numpy as np

from fringe.model.constants import ADVISORY_NOTICE, STANDARD_ATMOSPHERE_PA
from fringe.model.errors import FringeInputError, must_be

__all__ = [
    "HELIUM_FLUID", "AIR_OXYGEN_FRACTION", "OxygenThreshold", "OXYGEN_THRESHOLDS",
    "OxygenModel", "OXYGEN_MODELS", "oxygen_model_text", "room_volume_formula",
    "QUENCH_CAUTIONS", "HeliumProperties", "helium_properties", "coolprop_source",
    "room_conditions_K_Pa", "helium_properties_key", "helium_properties_expected",
    "expect_helium_properties", "lookup_helium_properties",
    "boiloff_mass_kg", "liquid_volume_L", "liquid_mass_kg", "gas_volume_m3",
    "oxygen_fraction_after_release", "oxygen_fraction_displacement",
    "room_volume_for_oxygen_m3", "dump_time_constant_s", "dump_current_A",
    "dump_peak_voltage_V", "time_to_current_fraction_s", "magnet_energy_left_J",
    "dump_energy_J", "dump_energy_fraction", "peak_helium_flow_kg_per_s",
    "vent_gas_velocity_m_per_s", "VENT_CAUTION", "DumpCircuit", "QuenchBudget",
    "quench_budget", "dump_decay_curves", "budget_table_rows",
]

#: CoolProp fluid name.
HELIUM_FLUID: str = "Helium"

#: Oxygen mole (≈ volume) fraction of dry air at sea level: 20.95 %
#: (US Standard Atmosphere 1976, table 3: O₂ 0.209476).
AIR_OXYGEN_FRACTION: float = 0.2095


@dataclass(frozen=True)
class OxygenThreshold:
    """An oxygen-deficiency threshold (volume fraction) with its source."""

    key: str
    fraction: float
    source: str


#: The one registry of oxygen thresholds; CLI, JSON, docs and tests read it.
OXYGEN_THRESHOLDS: tuple[OxygenThreshold, ...] = (
    OxygenThreshold("19.5%", 0.195,
                    "US OSHA 29 CFR 1910.146(b): oxygen-deficient atmosphere below 19.5 % "
                    "by volume"),
    OxygenThreshold("18%", 0.18,
                    "used in some European guidance (e.g. the 18 % evacuation level of UK "
                    "BCGA guidance, as quoted by university safety calculators)"),
)

@dataclass(frozen=True)
class OxygenModel:
    """A room-oxygen model and its formula text, written here once for every printer.

    Attributes
    ----------
    name : str
        Registry key.
    template : str
        The formula with ``{x0}`` (the initial oxygen fraction) and ``{V}`` (the symbol
        of the released gas volume) left open.
    assumptions : str
        What the model takes about the room.
    source : str
        Where it comes from.
    """

    name: str
    template: str
    assumptions: str
    source: str

    def formula(self, gas_symbol: str = "V_gas") -> str:
        """The formula text, e.g. ``0.2095·exp(−V_gas/V_room)``."""
        return self.template.format(x0=f"{AIR_OXYGEN_FRACTION:g}", V=gas_symbol)


#: The room-oxygen models (:func:`oxygen_fraction_after_release`,
#: :func:`oxygen_fraction_displacement`); JSON, tables and sheets print their text.
OXYGEN_MODELS: dict[str, OxygenModel] = {m.name: m for m in (
    OxygenModel("well-mixed", "{x0}·exp(−{V}/V_room)",
                "well-mixed room, displaced mixture escapes, no ventilation",
                "Fermilab ES&H Manual ch. 4240 §6.1.A"),
    OxygenModel("displacement", "{x0}·(1 − {V}/V_room)",
                "released gas pushes out unmixed air",
                "common practice, no source beyond university safety calculators"),
)}


def room_volume_formula(threshold_fraction: float, gas_symbol: str = "V") -> str:
    """Text of :func:`room_volume_for_oxygen_m3`, e.g. ``V/ln(0.2095/0.195)``."""
    return f"{gas_symbol}/ln({AIR_OXYGEN_FRACTION:g}/{threshold_fraction:g})"


def oxygen_model_text() -> str:
    """The ``oxygen_model`` line of a budget's JSON: both models and their formulas."""
    mixed, disp = OXYGEN_MODELS["well-mixed"], OXYGEN_MODELS["displacement"]
    return (f"{mixed.assumptions}: x = {mixed.formula()} ({mixed.source}); "
            f"{disp.name} estimate x = {disp.formula()}, lower for every release "
            "(the harsher of the two)")


#: Cautions printed with every quench budget (human output and JSON ``cautions``).
QUENCH_CAUTIONS: tuple[str, ...] = (
    "This quench budget is an ADVISORY ESTIMATE from a simple model; the magnet "
    "supplier's data, local codes and the site's safety experts govern.",
    "Helium released in a quench is a cold gas and an oxygen-deficiency hazard: low "
    "oxygen causes asphyxiation WITHOUT WARNING (no sensation of breathlessness); cold gas "
    "and liquid cause cryogenic burns; the white fog of condensed air hides the way out.",
    "The quench vent (quench pipe) system and room oxygen monitors must be designed, "
    "installed and tested per local code and the magnet supplier; this tool does not "
    "replace that design.",
    "After a quench or helium release, nobody enters or re-enters the room until the "
    "oxygen level has been verified as safe.",
)


# -- helium properties from CoolProp ------------------------------------------------------

@lru_cache(maxsize=1)
def coolprop_source() -> str:
    """Describe where helium properties come from: CoolProp version, backend and EOS.

    Read at run time from CoolProp itself (version string, the BibTeX key of the
    helium equation of state and its entry in CoolProp's bundled bibliography), so the
    text follows the installed library.
    """
    import CoolProp
    from CoolProp import CoolProp as CP

    version = CP.get_global_param_string("version") or CoolProp.__version__
    key = CP.get_BibTeXKey(HELIUM_FLUID, "EOS")
    ref = key
    try:
        bib = (resources.files("CoolProp") / "CoolPropBibTeXLibrary.bib").read_text(
            encoding="utf-8", errors="replace")
        m = re.search(r"@\w+\{" + re.escape(key) + r",(.*?)\n\}", bib, flags=re.S)
        if m:
            body = m.group(1) + "\n"

            def _field(name: str) -> str:
                f = re.search(r"\b" + name + r"\s*=\s*\{+(.*?)\}+\s*,?\s*\n", body,
                              flags=re.S | re.I)
                return " ".join(f.group(1).split()) if f else ""

            authors = _field("Author")
            first = authors.split(" and ")[0].split()[-1] if authors else "?"
            title, year, note = _field("Title"), _field("Year"), _field("Note")
            refprop = ("; coefficients as in NIST REFPROP 10"
                       if re.search(r"REF?PROP", note) else "")
            ref = f"{first} et al. {year}, {title!r} (CoolProp key {key}{refprop})"
    except (OSError, ModuleNotFoundError):  # pragma: no cover - bibliography not shipped
        pass
    return (f"CoolProp {version}, HEOS backend (Helmholtz-energy equation of state); "
            f"helium-4 equation of state: {ref}")


@dataclass(frozen=True)
class HeliumProperties:
    """Helium-4 values used by a quench budget, each from CoolProp.

    Attributes
    ----------
    boil_pressure_Pa : float
        Pressure of the liquid bath, Pa (1 atm).
    boiling_temperature_K : float
        Saturation temperature at ``boil_pressure_Pa``, K.
    liquid_density_kg_per_m3 : float
        Saturated-liquid density at ``boil_pressure_Pa``, kg/m³.
    vapour_density_kg_per_m3 : float
        Saturated-vapour density at ``boil_pressure_Pa``, kg/m³.
    latent_heat_J_per_kg : float
        h_vapour − h_liquid at saturation, J/kg.
    room_temperature_K, room_pressure_Pa : float
        Room conditions for the gas volume.
    gas_density_kg_per_m3 : float
        Gas density at room conditions, kg/m³.
    source : str
        Library, version, backend and equation of state.
    """

    boil_pressure_Pa: float
    boiling_temperature_K: float
    liquid_density_kg_per_m3: float
    vapour_density_kg_per_m3: float
    latent_heat_J_per_kg: float
    room_temperature_K: float
    room_pressure_Pa: float
    gas_density_kg_per_m3: float
    source: str

    @property
    def expansion_ratio(self) -> float:
        """Liquid-to-gas expansion ratio ρ_liquid / ρ_gas(room) (dimensionless)."""
        return self.liquid_density_kg_per_m3 / self.gas_density_kg_per_m3

    def to_dict(self) -> dict:
        return {"boil_pressure_Pa": self.boil_pressure_Pa,
                "boiling_temperature_K": self.boiling_temperature_K,
                "liquid_density_kg_per_m3": self.liquid_density_kg_per_m3,
                "saturated_vapour_density_kg_per_m3": self.vapour_density_kg_per_m3,
                "latent_heat_J_per_kg": self.latent_heat_J_per_kg,
                "room_temperature_K": self.room_temperature_K,
                "room_pressure_Pa": self.room_pressure_Pa,
                "gas_density_kg_per_m3": self.gas_density_kg_per_m3,
                "expansion_ratio": self.expansion_ratio,
                "source": self.source}


#: Helium look-ups already running elsewhere, by their key (see
#: :func:`expect_helium_properties`): a zero-argument callable that returns the values.
_EXPECTED: dict[tuple[float, float, float], Callable[[], HeliumProperties]] = {}

def room_conditions_K_Pa(room_temperature_C: float = 20.0,
                         room_pressure_kPa: float = 101.325) -> tuple[float, float]:
    """(K, Pa) of room conditions given in °C and kPa, as :func:`quench_budget` passes
    them to :func:`helium_properties` (so a look-up started ahead asks for exactly the
    same key)."""
    return float(room_temperature_C) + 273.15, float(room_pressure_kPa) * 1e3


def helium_properties_key(room_temperature_K: float = 293.15,
                          room_pressure_Pa: float = STANDARD_ATMOSPHERE_PA,
                          boil_pressure_Pa: float = STANDARD_ATMOSPHERE_PA
                          ) -> tuple[float, float, float]:
    """The key of one :func:`helium_properties` look-up: its three arguments as floats."""
    return float(room_temperature_K), float(room_pressure_Pa), float(boil_pressure_Pa)


def helium_properties_expected(room_temperature_K: float = 293.15,
                               room_pressure_Pa: float = STANDARD_ATMOSPHERE_PA,
                               boil_pressure_Pa: float = STANDARD_ATMOSPHERE_PA) -> bool:
    """True while values promised by :func:`expect_helium_properties` for these
    conditions wait to be collected by :func:`helium_properties`."""
    return helium_properties_key(room_temperature_K, room_pressure_Pa,
                                 boil_pressure_Pa) in _EXPECTED


def expect_helium_properties(room_temperature_K: float, room_pressure_Pa: float,
                             boil_pressure_Pa: float,
                             result: Callable[[], HeliumProperties]) -> None:
    """Promise :func:`helium_properties` the values of one look-up computed elsewhere.

    ``result`` is called (once, with no arguments) by the next :func:`helium_properties`
    call with these conditions, instead of asking CoolProp; it should return what
    :func:`lookup_helium_properties` returns for them (e.g. the value of the same look-up
    run ahead in another process, :mod:`fringe.io.prefetch`). If it raises, the look-up
    runs here, so errors come the usual way.

    Parameters
    ----------
    room_temperature_K, room_pressure_Pa, boil_pressure_Pa : float
        The conditions, as :func:`helium_properties` takes them.
    result : callable
        ``result() -> HeliumProperties``.
    """
    _EXPECTED[helium_properties_key(room_temperature_K, room_pressure_Pa,
                                    boil_pressure_Pa)] = result


@lru_cache(maxsize=64)
def helium_properties(room_temperature_K: float = 293.15,
                      room_pressure_Pa: float = STANDARD_ATMOSPHERE_PA,
                      boil_pressure_Pa: float = STANDARD_ATMOSPHERE_PA) -> HeliumProperties:
    """Helium-4 saturation and room-condition values from CoolProp [1]_.

    Parameters
    ----------
    room_temperature_K : float
        Temperature of the room the gas ends up in, K (default 293.15 K = 20 °C).
    room_pressure_Pa : float
        Room pressure, Pa (default 101 325 Pa).
    boil_pressure_Pa : float
        Pressure of the liquid bath, Pa (default 1 atm). Cryostats run a little above
        1 atm; the latent heat changes by < 1 % between 100 and 120 kPa.

    Returns
    -------
    HeliumProperties
        Cached per conditions; values promised by :func:`expect_helium_properties` are
        collected instead of asking CoolProp again.

    Raises
    ------
    FringeInputError
        For conditions outside CoolProp's helium range.

    References
    ----------
    .. [1] CoolProp HEOS backend, helium-4 equation of state of Ortiz-Vega et al.
       (see :func:`coolprop_source`).
    """
    key = helium_properties_key(room_temperature_K, room_pressure_Pa, boil_pressure_Pa)
    ahead = _EXPECTED.pop(key, None)
    if ahead is not None:
        try:
            return ahead()
        except Exception:  # noqa: BLE001 - compute here, so errors come the usual way
            pass
    return lookup_helium_properties(*key)


def lookup_helium_properties(room_temperature_K: float, room_pressure_Pa: float,
                             boil_pressure_Pa: float) -> HeliumProperties:
    """The CoolProp look-ups behind :func:`helium_properties` (uncached, nothing expected
    is collected): what a look-up run ahead elsewhere computes."""
    from CoolProp.CoolProp import PropsSI

    try:
        p = float(boil_pressure_Pa)
        t_boil = PropsSI("T", "P", p, "Q", 0, HELIUM_FLUID)
        rho_l = PropsSI("D", "P", p, "Q", 0, HELIUM_FLUID)
        rho_v = PropsSI("D", "P", p, "Q", 1, HELIUM_FLUID)
        h_fg = PropsSI("H", "P", p, "Q", 1, HELIUM_FLUID) - PropsSI("H", "P", p, "Q", 0,
                                                                    HELIUM_FLUID)
        rho_gas = PropsSI("D", "P", float(room_pressure_Pa), "T", float(room_temperature_K),
                          HELIUM_FLUID)
    except ValueError as e:
        raise FringeInputError(
            f"helium properties are not available at boil pressure {boil_pressure_Pa} Pa, "
            f"room {room_temperature_K} K and {room_pressure_Pa} Pa: {e}") from None
    return HeliumProperties(p, float(t_boil), float(rho_l), float(rho_v), float(h_fg),
                            float(room_temperature_K), float(room_pressure_Pa),
                            float(rho_gas), coolprop_source())


# -- kernels: boil-off and gas volume ------------------------------------------------------

def boiloff_mass_kg(energy_J, latent_heat_J_per_kg) -> np.ndarray:
    """Energy-limited boil-off: mass of saturated liquid evaporated by ``energy_J``.

    m = W / h_fg — all the energy taken as latent heat of saturated liquid. This is an
    upper bound for the boil-off caused by the energy alone: any part of W that warms
    the cold mass or the escaping gas evaporates nothing. It is not a bound on the loss:
    heat leaking in after the quench, liquid carried out with the gas or a loss of
    insulating vacuum can still empty the whole inventory.

    Parameters
    ----------
    energy_J : float or array
        Energy deposited in the helium bath, J.
    latent_heat_J_per_kg : float
        Latent heat of vaporisation, J/kg.

    Returns
    -------
    float or ndarray
        Mass evaporated, kg.
    """
    return np.asarray(energy_J, dtype=float) / latent_heat_J_per_kg


def liquid_volume_L(mass_kg, liquid_density_kg_per_m3) -> np.ndarray:
    """Volume of liquid, L, of ``mass_kg`` at ``liquid_density_kg_per_m3``."""
    return np.asarray(mass_kg, dtype=float) / liquid_density_kg_per_m3 * 1e3


def liquid_mass_kg(volume_L, liquid_density_kg_per_m3) -> np.ndarray:
    """Mass, kg, of ``volume_L`` litres of liquid at ``liquid_density_kg_per_m3``."""
    return np.asarray(volume_L, dtype=float) * 1e-3 * liquid_density_kg_per_m3


def gas_volume_m3(mass_kg, gas_density_kg_per_m3) -> np.ndarray:
    """Volume, m³, of ``mass_kg`` of gas at a density ``gas_density_kg_per_m3``."""
    return np.asarray(mass_kg, dtype=float) / gas_density_kg_per_m3


# -- kernels: room oxygen ----------------------------------------------------------------

def oxygen_fraction_after_release(gas_volume_m3, room_volume_m3,
                                  initial_fraction=AIR_OXYGEN_FRACTION) -> np.ndarray:
    """Oxygen volume fraction after a release into a well-mixed room (dilution model).

    The gas enters a room of fixed volume V_room that stays perfectly mixed while the
    displaced mixture escapes (no ventilation). Each small release dV pushes out room
    mixture of the same composition, so dx/dV = −x/V_room and [2]_::

        x = x0 · exp(−V / V_room)

    The cruder "displacement" estimate x0·(1 − V/V_room)
    (:func:`oxygen_fraction_displacement`: the gas pushes out pure air before it mixes)
    gives slightly lower oxygen and is reported beside it as a cross-check.

    Parameters
    ----------
    gas_volume_m3 : float or array
        Volume of the released gas at room conditions, m³ (≥ 0).
    room_volume_m3 : float or array
        Free air volume of the room, m³ (> 0).
    initial_fraction : float
        Oxygen fraction before the release (default 0.2095, dry air).

    Returns
    -------
    float or ndarray
        Oxygen volume fraction (0 … initial_fraction).

    References
    ----------
    .. [2] Fermilab ES&H Manual chapter 4240 §6.1.A, no-ventilation case
       C = 0.21·exp(−R·t/V) with R·t the released volume (here x0 = 0.2095).
    """
    v = np.asarray(gas_volume_m3, dtype=float)
    return initial_fraction * np.exp(-v / np.asarray(room_volume_m3, dtype=float))  # [2]


def oxygen_fraction_displacement(gas_volume_m3, room_volume_m3,
                                 initial_fraction=AIR_OXYGEN_FRACTION) -> np.ndarray:
    """Oxygen fraction if the released gas pushes out unmixed air: x0·max(0, 1 − V/V_room).

    Lower than the well-mixed value (1 − v ≤ e^(−v)); common practice, no source beyond
    university safety calculators.
    """
    v = np.asarray(gas_volume_m3, dtype=float) / np.asarray(room_volume_m3, dtype=float)
    return initial_fraction * np.clip(1.0 - v, 0.0, None)


def room_volume_for_oxygen_m3(gas_volume_m3, threshold_fraction,
                              initial_fraction=AIR_OXYGEN_FRACTION) -> np.ndarray:
    """Room volume, m³, for which the well-mixed release just reaches ``threshold_fraction``.

    Inverting :func:`oxygen_fraction_after_release`:
    V_room = V / ln(x0 / x_threshold). A larger room keeps the oxygen above the threshold.
    """
    return np.asarray(gas_volume_m3, dtype=float) / math.log(initial_fraction
                                                             / threshold_fraction)


# -- kernels: dump resistor (L/R decay) ---------------------------------------------------

def dump_time_constant_s(inductance_H, dump_ohm, magnet_resistance_ohm=0.0) -> np.ndarray:
    """τ = L / (R_dump + R_magnet), s [4]_.

    References
    ----------
    .. [4] M. N. Wilson, *Superconducting Magnets* (1983), ch. 9.
    """
    return np.asarray(inductance_H, dtype=float) / (np.asarray(dump_ohm, dtype=float)
                                                    + magnet_resistance_ohm)


def dump_current_A(time_s, initial_current_A, inductance_H, dump_ohm,
                   magnet_resistance_ohm=0.0) -> np.ndarray:
    """Current after the switch opens onto the dump resistor: I = I0·exp(−t/τ) [4]_.

    Both resistances are taken constant; in a real quench the magnet's normal-zone
    resistance grows with time, which only shortens the decay.
    """
    tau = dump_time_constant_s(inductance_H, dump_ohm, magnet_resistance_ohm)
    return initial_current_A * np.exp(-np.asarray(time_s, dtype=float) / tau)


def dump_peak_voltage_V(initial_current_A, dump_ohm) -> np.ndarray:
    """Peak voltage across the dump resistor (the magnet terminals), V: I0·R_dump."""
    return np.abs(np.asarray(initial_current_A, dtype=float)) * np.asarray(dump_ohm,
                                                                           dtype=float)


def time_to_current_fraction_s(time_constant_s, fraction=0.01) -> np.ndarray:
    """Time, s, for the current to fall to ``fraction`` of I0: τ·ln(1/fraction)."""
    return np.asarray(time_constant_s, dtype=float) * math.log(1.0 / fraction)


def magnet_energy_left_J(time_s, initial_current_A, inductance_H, dump_ohm,
                         magnet_resistance_ohm=0.0) -> np.ndarray:
    """Magnetic energy still stored at ``time_s``: ½·L·I(t)², J."""
    i = dump_current_A(time_s, initial_current_A, inductance_H, dump_ohm,
                       magnet_resistance_ohm)
    return 0.5 * np.asarray(inductance_H, dtype=float) * i ** 2


def dump_energy_fraction(dump_ohm, magnet_resistance_ohm=0.0) -> np.ndarray:
    """Share of the stored energy that ends in the dump resistor: R_d / (R_d + R_m).

    Both resistors carry the same current, so they share ∫I²dt in proportion to their
    resistance. With R_m = 0 the whole stored energy goes to the dump resistor.
    """
    rd = np.asarray(dump_ohm, dtype=float)
    return rd / (rd + magnet_resistance_ohm)


def dump_energy_J(time_s, initial_current_A, inductance_H, dump_ohm,
                  magnet_resistance_ohm=0.0) -> np.ndarray:
    """Energy delivered to the dump resistor from t = 0 to ``time_s``, J.

    ∫₀ᵗ I²·R_d dt' = ½·L·I0²·R_d/(R_d + R_m)·(1 − exp(−2t/τ)); → W·R_d/(R_d + R_m) as
    t → ∞ (W = ½·L·I0² for a single circuit).
    """
    w = 0.5 * np.asarray(inductance_H, dtype=float) * np.asarray(initial_current_A,
                                                                 dtype=float) ** 2
    tau = dump_time_constant_s(inductance_H, dump_ohm, magnet_resistance_ohm)
    t = np.asarray(time_s, dtype=float)
    return w * dump_energy_fraction(dump_ohm, magnet_resistance_ohm) * (
        -np.expm1(-2.0 * t / tau))


def peak_helium_flow_kg_per_s(energy_J, time_constant_s, latent_heat_J_per_kg) -> np.ndarray:
    """Energy-limited peak helium boil-off rate for an exponential current decay, kg/s.

    With I(t) = I0·exp(−t/τ) the stored energy falls as W(t) = W·exp(−2t/τ), so the power
    released is largest at t = 0: P(0) = 2W/τ. If all of it boils saturated liquid
    helium, the peak mass flow is

    .. math:: \\dot m_{peak} = 2W / (τ · h_{fg})

    An upper bound of the rate: heat that reaches the helium later (through the cold
    mass) or energy taken by a resistor outside the cryostat only lowers it.

    Parameters
    ----------
    energy_J : float or array_like
        Stored energy W, J.
    time_constant_s : float or array_like
        Current decay time constant τ = L/(R_d + R_m), s.
    latent_heat_J_per_kg : float
        Latent heat of vaporisation h_fg of helium at the boiling pressure, J/kg.

    References
    ----------
    .. [1] Iwasa, Y., *Case Studies in Superconducting Magnets*, 2nd ed., Springer
       (2009), the chapter on protection (exponential discharge, W(t) = W·e^(−2t/τ));
       chapter from memory. The bound itself follows from I(t) alone.

    Examples
    --------
    >>> round(float(peak_helium_flow_kg_per_s(4.0e6, 20.0, 20.4e3)), 3)  # 8 MJ/(20 s·20.4 kJ/kg)
    19.608
    """
    return (2.0 * np.asarray(energy_J, dtype=float)
            / (np.asarray(time_constant_s, dtype=float) * float(latent_heat_J_per_kg)))


def vent_gas_velocity_m_per_s(gas_flow_m3_per_s, vent_diameter_m) -> np.ndarray:
    """Mean gas velocity in a round vent, m/s: volume flow / (π·D²/4).

    >>> round(float(vent_gas_velocity_m_per_s(0.5, 0.25)), 3)
    10.186
    """
    d = np.asarray(vent_diameter_m, dtype=float)
    return np.asarray(gas_flow_m3_per_s, dtype=float) / (math.pi * d * d / 4.0)


#: Caution printed with a vent velocity (common practice, no source).
VENT_CAUTION: str = (
    "The quench vent is the magnet supplier's design and is sized by them; the vent "
    "velocity here is of gas at room conditions at the energy-limited peak flow. Gas "
    "leaving a quenching magnet is cold and several times denser, so its real volume "
    "flow and velocity differ; use this figure only as a plausibility check.")


# -- checked layer -------------------------------------------------------------------------

#: Plausibility bounds of quench inputs (common practice, no source): far outside any
#: real magnet installation, they only catch typing errors (a unit slip, 1e300).
PLAUSIBLE_RANGES: dict[str, tuple[float, float]] = {
    "helium_L": (1e-3, 1e6),          # 1 mL to 1000 m³ of liquid
    "room_volume_m3": (0.1, 1e8),     # a cupboard to a very large hall
    "dump_ohm": (1e-6, 1e5),
    "stored_energy_J": (0.0, 1e12),   # up to ~1 TJ (the largest fusion magnets are ~50 GJ)
}


def _positive(name: str, value, *, allow_zero: bool = False) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError, OverflowError):
        raise FringeInputError(must_be(name, "a number", value)) from None
    if not math.isfinite(v) or v < 0 or (v == 0 and not allow_zero):
        raise FringeInputError(must_be(
            name, "a finite number ≥ 0" if allow_zero else "a finite number > 0", value))
    lo, hi = PLAUSIBLE_RANGES.get(name, (0.0, math.inf))
    if not lo <= v <= hi and not (allow_zero and v == 0):
        raise FringeInputError(must_be(name, f"a plausible value between {lo:g} and {hi:g} "
                                       "(check the unit)", value))
    return v


@dataclass(frozen=True)
class DumpCircuit:
    """An external protection (dump) circuit and its decay.

    Attributes
    ----------
    inductance_H, initial_current_A, dump_ohm, magnet_resistance_ohm : float
        Circuit inductance, current when the dump starts, dump and magnet resistance.
    time_constant_s, peak_voltage_V, time_to_1_percent_s : float
    energy_into_resistor_J : float
        Energy the dump resistor takes over the whole decay (W·R_d/(R_d + R_m)).
    energy_into_magnet_J : float
        The rest, dissipated in the magnet's own resistance (cold mass).
    """

    inductance_H: float
    initial_current_A: float
    dump_ohm: float
    magnet_resistance_ohm: float
    time_constant_s: float
    peak_voltage_V: float
    time_to_1_percent_s: float
    energy_into_resistor_J: float
    energy_into_magnet_J: float

    def to_dict(self) -> dict:
        """The JSON form (``dump_circuit`` of ``fringe quench --json`` and summary.json);
        the inductance under ``circuit_inductance_H``, as ``fringe energy --json`` names it."""
        out = dict(self.__dict__)
        return {"circuit_inductance_H": out.pop("inductance_H"), **out}


@dataclass(frozen=True)
class QuenchBudget:
    """A quench release budget: inputs, helium values used and every result.

    All volumes of gas are at the room conditions in ``helium``. Fractions are volume
    (mole) fractions, 0…1.
    """

    stored_energy_J: float
    helium_L: float
    room_volume_m3: float
    helium: HeliumProperties
    inventory_kg: float
    helium_boiled_uncapped_kg: float
    helium_boiled_kg: float
    helium_boiled_L: float
    capped_by_inventory: bool
    gas_volume_m3: float
    inventory_gas_volume_m3: float
    oxygen_fraction_energy_limited: float
    oxygen_fraction_worst_case: float
    oxygen_fraction_worst_case_displacement: float
    room_volume_m3_for_19_5_percent: float
    thresholds: tuple[dict, ...]
    dump: DumpCircuit | None = None
    dump_refused_reason: str = ""
    magnet: str = ""
    room_temperature_C: float = 20.0
    room_pressure_kPa: float = 101.325
    cautions: tuple[str, ...] = field(default=QUENCH_CAUTIONS)
    #: Energy-limited peak helium boil-off 2W/(τ·h_fg), kg/s (with a dump circuit only).
    peak_helium_flow_kg_per_s: float | None = None
    #: That flow as gas at the room conditions, m³/s.
    peak_gas_flow_m3_per_s: float | None = None
    #: Vent diameter given for a velocity check, m, and the mean velocity there, m/s.
    vent_diameter_m: float | None = None
    vent_gas_velocity_m_per_s: float | None = None

    @property
    def time_constant_s(self) -> float | None:
        return self.dump.time_constant_s if self.dump else None

    @property
    def peak_voltage_V(self) -> float | None:
        return self.dump.peak_voltage_V if self.dump else None

    def to_dict(self) -> dict:
        """The JSON form of ``fringe quench --json``."""
        out = {
            "advisory": ADVISORY_NOTICE,
            "magnet": self.magnet,
            "inputs": {"stored_energy_J": self.stored_energy_J, "helium_L": self.helium_L,
                       "room_volume_m3": self.room_volume_m3,
                       "room_temperature_C": self.room_temperature_C,
                       "room_pressure_kPa": self.room_pressure_kPa,
                       "dump_ohm": self.dump.dump_ohm if self.dump else None,
                       "magnet_resistance_ohm": (self.dump.magnet_resistance_ohm
                                                 if self.dump else None)},
            "helium_properties": self.helium.to_dict(),
            "stored_energy_J": self.stored_energy_J,
            "helium_inventory_kg": self.inventory_kg,
            "helium_boiled_uncapped_kg": self.helium_boiled_uncapped_kg,
            "helium_boiled_kg": self.helium_boiled_kg,
            "helium_boiled_L": self.helium_boiled_L,
            "helium_boiled_capped_by_inventory": self.capped_by_inventory,
            "gas_volume_m3": self.gas_volume_m3,
            "inventory_gas_volume_m3": self.inventory_gas_volume_m3,
            "oxygen_fraction_energy_limited": self.oxygen_fraction_energy_limited,
            "oxygen_fraction_worst_case": self.oxygen_fraction_worst_case,
            "oxygen_fraction_worst_case_displacement":
                self.oxygen_fraction_worst_case_displacement,
            "oxygen_model": oxygen_model_text(),
            "room_volume_m3_for_19_5_percent": self.room_volume_m3_for_19_5_percent,
            "oxygen_thresholds": list(self.thresholds),
            "time_constant_s": self.time_constant_s,
            "peak_voltage_V": self.peak_voltage_V,
            "dump_circuit": self.dump.to_dict() if self.dump else None,
            "cautions": list(self.cautions),
        }
        if self.dump_refused_reason:
            out["dump_circuit_refused"] = self.dump_refused_reason
        if self.peak_helium_flow_kg_per_s is not None:
            out["peak_helium_flow_kg_per_s"] = self.peak_helium_flow_kg_per_s
            out["peak_gas_flow_m3_per_s"] = self.peak_gas_flow_m3_per_s
        if self.vent_gas_velocity_m_per_s is not None:
            out["vent_diameter_mm"] = self.vent_diameter_m * 1e3
            out["vent_gas_velocity_m_per_s"] = self.vent_gas_velocity_m_per_s
        return out

    def with_vent(self, vent_diameter_m: float) -> QuenchBudget:
        """This budget with the mean gas velocity in a round vent of ``vent_diameter_m``
        at the peak gas flow, and :data:`VENT_CAUTION` among the cautions.

        Raises
        ------
        FringeInputError
            Without a dump circuit (no peak flow) or for a non-positive diameter.
        """
        d = _positive("vent_diameter_m", vent_diameter_m)
        if self.peak_gas_flow_m3_per_s is None:
            raise FringeInputError(must_be("vent_diameter_m", "given together with a dump "
                                           "circuit (the peak flow needs its time constant)",
                                           vent_diameter_m))
        v = float(vent_gas_velocity_m_per_s(self.peak_gas_flow_m3_per_s, d))
        return replace(self, vent_diameter_m=d, vent_gas_velocity_m_per_s=v,
                       cautions=(*self.cautions, VENT_CAUTION))


def quench_budget(stored_energy_J: float, helium_L: float, room_volume_m3: float, *,
                  room_temperature_C: float = 20.0, room_pressure_kPa: float = 101.325,
                  dump_ohm: float | None = None, inductance_H: float | None = None,
                  initial_current_A: float | None = None,
                  magnet_resistance_ohm: float = 0.0,
                  dump_refused_reason: str = "", magnet: str = "") -> QuenchBudget:
    """Build a quench release budget.

    Parameters
    ----------
    stored_energy_J : float
        Magnetic stored energy W, J (> 0).
    helium_L : float
        Liquid helium inventory, litres of saturated liquid at 1 atm (> 0).
    room_volume_m3 : float
        Free air volume of the magnet room, m³ (> 0).
    room_temperature_C, room_pressure_kPa : float
        Room conditions for the gas volume (default 20 °C, 101.325 kPa).
    dump_ohm : float, optional
        External dump resistance, Ω (> 0). Needs ``inductance_H`` and
        ``initial_current_A``; otherwise no dump part is computed.
    inductance_H, initial_current_A : float, optional
        Circuit inductance, H, and current, A, of the magnet's single circuit.
    magnet_resistance_ohm : float
        Resistance of the magnet itself during the decay, Ω (≥ 0, default 0 — the whole
        energy then goes into the dump resistor).
    dump_refused_reason : str
        Why the dump part was not computed (stored in the budget and its JSON).
    magnet : str
        Name of the magnet, for the record.

    Returns
    -------
    QuenchBudget

    Raises
    ------
    FringeInputError
        For a non-positive or non-finite input.
    """
    w = _positive("stored_energy_J", stored_energy_J)
    vol_l = _positive("helium_L", helium_L)
    v_room = _positive("room_volume_m3", room_volume_m3)
    t_c = float(room_temperature_C)
    if not (math.isfinite(t_c) and -60.0 <= t_c <= 60.0):
        raise FringeInputError(must_be("room_temperature_C", "between -60 and 60 °C",
                                       room_temperature_C))
    p_kpa = float(room_pressure_kPa)
    if not (math.isfinite(p_kpa) and 50.0 <= p_kpa <= 200.0):
        raise FringeInputError(must_be("room_pressure_kPa", "between 50 and 200 kPa",
                                       room_pressure_kPa))
    he = helium_properties(*room_conditions_K_Pa(t_c, p_kpa))

    inv_kg = float(liquid_mass_kg(vol_l, he.liquid_density_kg_per_m3))
    boiled_uncapped = float(boiloff_mass_kg(w, he.latent_heat_J_per_kg))
    boiled = min(boiled_uncapped, inv_kg)
    gas = float(gas_volume_m3(boiled, he.gas_density_kg_per_m3))
    gas_inv = float(gas_volume_m3(inv_kg, he.gas_density_kg_per_m3))
    x_energy = float(oxygen_fraction_after_release(gas, v_room))
    x_worst = float(oxygen_fraction_after_release(gas_inv, v_room))
    thresholds = tuple(
        {"threshold": t.key, "fraction": t.fraction, "source": t.source,
         "energy_limited": "stays above" if x_energy >= t.fraction else "falls below",
         "worst_case": "stays above" if x_worst >= t.fraction else "falls below",
         "room_volume_m3_needed_worst_case": float(room_volume_for_oxygen_m3(gas_inv,
                                                                             t.fraction))}
        for t in OXYGEN_THRESHOLDS)

    dump = None
    if dump_ohm is not None:
        rd = _positive("dump_ohm", dump_ohm)
        rm = _positive("magnet_resistance_ohm", magnet_resistance_ohm, allow_zero=True)
        if inductance_H is None or initial_current_A is None:
            if not dump_refused_reason:
                dump_refused_reason = ("the dump-resistor decay needs the circuit "
                                       "inductance and current; none was given")
        else:
            lh = _positive("inductance_H", inductance_H)
            i0 = float(initial_current_A)
            tau = float(dump_time_constant_s(lh, rd, rm))
            frac = float(dump_energy_fraction(rd, rm))
            w_circuit = 0.5 * lh * i0 ** 2
            dump = DumpCircuit(lh, i0, rd, rm, tau, float(dump_peak_voltage_V(i0, rd)),
                               float(time_to_current_fraction_s(tau, 0.01)),
                               w_circuit * frac, w_circuit * (1.0 - frac))
            dump_refused_reason = ""
    peak = None if dump is None else float(peak_helium_flow_kg_per_s(
        w, dump.time_constant_s, he.latent_heat_J_per_kg))
    return QuenchBudget(
        peak_helium_flow_kg_per_s=peak,
        peak_gas_flow_m3_per_s=None if peak is None else float(
            gas_volume_m3(peak, he.gas_density_kg_per_m3)),
        stored_energy_J=w, helium_L=vol_l, room_volume_m3=v_room, helium=he,
        inventory_kg=inv_kg, helium_boiled_uncapped_kg=boiled_uncapped,
        helium_boiled_kg=boiled,
        helium_boiled_L=float(liquid_volume_L(boiled, he.liquid_density_kg_per_m3)),
        capped_by_inventory=boiled_uncapped > inv_kg, gas_volume_m3=gas,
        inventory_gas_volume_m3=gas_inv, oxygen_fraction_energy_limited=x_energy,
        oxygen_fraction_worst_case=x_worst,
        oxygen_fraction_worst_case_displacement=float(
            oxygen_fraction_displacement(gas_inv, v_room)),
        room_volume_m3_for_19_5_percent=float(room_volume_for_oxygen_m3(gas_inv, 0.195)),
        thresholds=thresholds, dump=dump,
        dump_refused_reason=dump_refused_reason if dump_ohm is not None else "",
        magnet=magnet, room_temperature_C=t_c, room_pressure_kPa=p_kpa)


# -- curves and the report sheet -----------------------------------------------------------

def dump_decay_curves(dump: DumpCircuit, n_points: int = 201,
                      duration_s: float | None = None) -> dict[str, np.ndarray]:
    """Sampled decay of a dump circuit: time, current, energy left, energy dumped.

    Parameters
    ----------
    dump : DumpCircuit
    n_points : int
        Samples (default 201).
    duration_s : float, optional
        End time, s (default the time to 1 % current, ≈ 4.6 τ).

    Returns
    -------
    dict
        ``time_s``, ``current_A``, ``energy_left_J``, ``energy_into_resistor_J``
        (1-D arrays of length ``n_points``).
    """
    t_end = dump.time_to_1_percent_s if duration_s is None else float(duration_s)
    t = np.linspace(0.0, t_end, int(n_points))
    args = (dump.initial_current_A, dump.inductance_H, dump.dump_ohm,
            dump.magnet_resistance_ohm)
    return {"time_s": t, "current_A": dump_current_A(t, *args),
            "energy_left_J": magnet_energy_left_J(t, *args),
            "energy_into_resistor_J": dump_energy_J(t, *args)}


def budget_table_rows(b: QuenchBudget) -> list[tuple[str, float | str, str, str]]:
    """The budget as rows (quantity, value, unit, basis) for tables and reports."""
    he = b.helium
    mixed = OXYGEN_MODELS["well-mixed"]
    room = f"{b.room_temperature_C:g} °C, {b.room_pressure_kPa:g} kPa"
    rows: list[tuple[str, float | str, str, str]] = [
        ("stored energy W", b.stored_energy_J / 1e6, "MJ", "fringe.physics.energy: ½·Iᵀ·M·I"),
        ("helium inventory", b.helium_L, "L", "input (liquid at 1 atm)"),
        ("helium inventory", b.inventory_kg, "kg", "× saturated-liquid density"),
        ("energy-limited boil-off W/h_fg", b.helium_boiled_uncapped_kg, "kg",
         "upper bound for the energy alone"),
        ("energy-limited boil-off, capped by inventory", b.helium_boiled_kg, "kg",
         "capped" if b.capped_by_inventory else "below the inventory"),
        ("energy-limited boil-off, liquid", b.helium_boiled_L, "L", ""),
        ("energy-limited gas volume", b.gas_volume_m3, "m³", f"gas at {room}"),
        ("largest release: whole inventory as gas", b.inventory_gas_volume_m3, "m³",
         f"gas at {room}"),
        ("room free volume", b.room_volume_m3, "m³", "input"),
        ("oxygen after energy-limited release", 100 * b.oxygen_fraction_energy_limited, "%",
         f"{mixed.formula('V')}, well mixed"),
        ("oxygen after whole inventory, well mixed", 100 * b.oxygen_fraction_worst_case, "%",
         f"{mixed.formula('V')}; milder than displacement"),
        ("oxygen after whole inventory, displacement",
         100 * b.oxygen_fraction_worst_case_displacement, "%",
         f"{OXYGEN_MODELS['displacement'].formula('V')}; harsher (lower)"),
        ("room volume keeping whole inventory ≥ 19.5 % (well mixed)",
         b.room_volume_m3_for_19_5_percent, "m³", room_volume_formula(0.195)),
    ]
    for t in b.thresholds:
        rows.append((f"{t['threshold']} threshold", f"energy-limited {t['energy_limited']}; "
                     f"whole inventory (well mixed) {t['worst_case']}", "", t["source"]))
    if b.dump is not None:
        d = b.dump
        rows += [
            ("dump resistance", d.dump_ohm, "Ω", "input"),
            ("magnet resistance during decay", d.magnet_resistance_ohm, "Ω", "input"),
            ("circuit inductance L", d.inductance_H, "H", "fringe.physics.energy: 2W/I²"),
            ("initial current I0", d.initial_current_A, "A", "common coil current"),
            ("time constant τ", d.time_constant_s, "s", "L/(R_dump + R_magnet)"),
            ("peak terminal voltage", d.peak_voltage_V, "V", "I0·R_dump"),
            ("time to 1 % current", d.time_to_1_percent_s, "s", "τ·ln 100"),
            ("energy into dump resistor", d.energy_into_resistor_J / 1e6, "MJ",
             "W·R_dump/(R_dump + R_magnet)"),
        ]
    elif b.dump_refused_reason:
        rows.append(("dump resistor decay", "not computed", "", b.dump_refused_reason))
    rows += [
        ("helium normal boiling point", he.boiling_temperature_K, "K", "CoolProp"),
        ("saturated liquid density", he.liquid_density_kg_per_m3, "kg/m³", "CoolProp"),
        ("latent heat h_fg", he.latent_heat_J_per_kg / 1e3, "kJ/kg", "CoolProp"),
        ("gas density at room conditions", he.gas_density_kg_per_m3, "kg/m³", "CoolProp"),
        ("expansion ratio liquid → gas", he.expansion_ratio, "", "CoolProp"),
    ]
    return rows
