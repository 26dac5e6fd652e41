"""The safety notes shown in every human report (the README carries the same points)."""

from __future__ import annotations

__all__ = ["SAFETY_NOTES", "ESTIMATE_NOTE"]

SAFETY_NOTES: tuple[str, ...] = (
    "Never laser-cut PVC, vinyl, artificial leather or other chlorine-bearing plastics: they release "
    "chlorine and hydrogen chloride, which are toxic and corrode the machine. platewright refuses them.",
    "Run fume extraction for every cut; plywood and MDF glues release formaldehyde, many plastics give "
    "off hazardous fumes (ABS, polycarbonate, HDPE need special care or another process).",
    "Never leave a running cutter unattended. Cutting can start a fire: keep a CO2 extinguisher at hand "
    "(not water) and keep the bed free of scrap.",
    "Follow the machine maker's instructions and your local rules for laser, waterjet and router work; "
    "they come before anything this report says.",
    "Mass, stiffness and strength figures are estimates from idealised models and typical material data "
    "(not design allowables). Confirm them by test before relying on a part that carries load or could "
    "hurt someone if it fails, and seek licensed engineering review where the application needs it.",
)

ESTIMATE_NOTE = (
    "Finite-element results are estimates to be confirmed by test: they assume linear elastic, "
    "typical material properties and idealised supports and loads."
)
