"""Abrasive waterjet cutting speed from the machinability-number model, and its calibration.

Model (Zeng & Kim, "Parameter prediction and cost analysis in abrasive waterjet cutting
operations", 7th American Water Jet Conference, 1993), in the form recalled in
shared/REFERENCES.md, exponents not verified against the paper (# from memory):

    u = [ f_a · N_m · P^1.594 · d_o^1.374 · M_a^0.343 / (C · q · h · d_m^0.618) ]^1.15

N_m the material's machinability number, q the quality level 1 (separation cut) to 5 (finest),
f_a the abrasive factor (1 for garnet), C a constant whose value depends on the units.  Two values
circulate, near 788 and near 163.  They are the same model in two unit systems: converting every
input from metric working units (P MPa, orifice d_o and mixing tube d_m mm, abrasive M_a g/min,
thickness h mm, u mm/min) to inch-pound units (ksi, in, lb/min, in/min) multiplies the constant by
(1/6.894757)^1.594 · (1/25.4)^1.374 · (1/453.59237)^0.343 · 25.4^1.618 · 25.4^(1/1.15) = 1/4.825
(:func:`inch_pound_constant`), and 788 / 4.825 = 163.3.  So C = 788 belongs to the metric form,
which is what is evaluated here; taken with inch-pound inputs (an earlier version did) it gives
speeds about six times too slow.  Because the constants are recalled, calibrate N_m from one
measured test cut.
"""

from __future__ import annotations

from dataclasses import dataclass

#: exact conversion factors
MM_PER_IN = 25.4
MPA_PER_KSI = 6.894757293168361  # 1 psi = 0.45359237 kg·9.80665 m/s² / (0.0254 m)²
KG_PER_LB = 0.45359237
G_PER_KG = 1000.0

EXPONENT = 1.15  # from memory
P_EXP, ORIFICE_EXP, ABRASIVE_EXP, TUBE_EXP = 1.594, 1.374, 0.343, 0.618  # from memory


@dataclass(frozen=True)
class WaterjetInputs:
    pressure_mpa: float
    orifice_mm: float
    focus_tube_mm: float
    abrasive_kg_min: float
    machinability: float
    model_constant: float = 788.0  # from memory
    abrasive_factor: float = 1.0  # garnet; from memory


def waterjet_feed_mm_min(w: WaterjetInputs, thickness_mm: float, quality: float) -> float:
    """Cutting speed (mm/min) at ``thickness_mm`` and quality level ``quality`` (1-5): the model in
    metric working units (MPa, mm, g/min), where the constant near 788 belongs."""
    m_a = w.abrasive_kg_min * G_PER_KG
    inner = (w.abrasive_factor * w.machinability * w.pressure_mpa**P_EXP * w.orifice_mm**ORIFICE_EXP
             * m_a**ABRASIVE_EXP / (w.model_constant * quality * thickness_mm * w.focus_tube_mm**TUBE_EXP))
    return inner**EXPONENT


def inch_pound_constant(metric_constant: float) -> float:
    """The constant of the same model written for ksi, in, lb/min and in/min (see the module notes)."""
    factor = (MPA_PER_KSI**P_EXP * MM_PER_IN**ORIFICE_EXP * (KG_PER_LB * G_PER_KG) ** ABRASIVE_EXP
              / MM_PER_IN ** (1.0 + TUBE_EXP) / MM_PER_IN ** (1.0 / EXPONENT))
    return metric_constant / factor


def calibrated_machinability(w: WaterjetInputs, thickness_mm: float, quality: float,
                             measured_mm_min: float) -> float:
    """The machinability number that makes the model give ``measured_mm_min`` for this cut.

    Speed grows as N_m^1.15, so N_m scales by (measured / predicted)^(1/1.15).
    """
    predicted = waterjet_feed_mm_min(w, thickness_mm, quality)
    return w.machinability * (measured_mm_min / predicted) ** (1.0 / EXPONENT)
