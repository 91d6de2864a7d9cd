"""Abrasive waterjet cutting speed from the machinability-number model, and its calibration.

Model (Zeng & Kim, "Parameter prediction and cost analysis in abrasive waterjet cutting
operations", 7th American Water Jet Conference, 1993), in the form recalled in
shared/REFERENCES.md, exponents not verified against the paper (# from memory):

    u = [ f_a · N_m · P^1.594 · d_o^1.374 · M_a^0.343 / (C · q · h · d_m^0.618) ]^1.15

in English units: u in/min, P ksi, orifice d_o and mixing (focusing) tube d_m in inches, abrasive
rate M_a lb/min, thickness h in inches; N_m the material's machinability number, q the quality
level 1 (separation cut) to 5 (finest), C a constant (about 788), f_a the abrasive factor
(1 for garnet).  Inputs and output here are metric; the conversions are exact.
Because the model's constants are recalled, calibrate N_m from one measured test cut.
"""

from __future__ import annotations

from dataclasses import dataclass

#: exact conversion factors
MM_PER_IN = 25.4
MPA_PER_KSI = 6.894757293168361  # 1 psi = 0.45359237 kg·9.80665 m/s² / (0.0254 m)²
KG_PER_LB = 0.45359237

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
    """Cutting speed (mm/min) at ``thickness_mm`` and quality level ``quality`` (1-5)."""
    p = w.pressure_mpa / MPA_PER_KSI
    d_o = w.orifice_mm / MM_PER_IN
    d_m = w.focus_tube_mm / MM_PER_IN
    m_a = w.abrasive_kg_min / KG_PER_LB
    h = thickness_mm / MM_PER_IN
    inner = (w.abrasive_factor * w.machinability * p**P_EXP * d_o**ORIFICE_EXP * m_a**ABRASIVE_EXP
             / (w.model_constant * quality * h * d_m**TUBE_EXP))
    return inner**EXPONENT * MM_PER_IN


def calibrated_machinability(w: WaterjetInputs, thickness_mm: float, quality: float,
                             measured_mm_min: float) -> float:
    """The machinability number that makes the model give ``measured_mm_min`` for this cut.

    Speed grows as N_m^1.15, so N_m scales by (measured / predicted)^(1/1.15).
    """
    predicted = waterjet_feed_mm_min(w, thickness_mm, quality)
    return w.machinability * (measured_mm_min / predicted) ** (1.0 / EXPONENT)
