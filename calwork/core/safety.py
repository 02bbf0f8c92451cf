"""The safety note: the one text that every report, workbook, markdown summary and command
help carries, and that module documentation points to."""

from __future__ import annotations

__all__ = ["SAFETY_NOTE"]

#: Cautions for the work behind the numbers; it defers to the makers, local codes and
#: licensed practice (common practice for oxygen-bomb and solution calorimetry).
SAFETY_NOTE = (
    "Safety: oxygen bombs are pressure vessels, charged with oxygen to about 3 MPa; the "
    "combustion leaves nitric (and sulfuric) acid in the bomb; calibration heaters and "
    "ignition circuits are electrical equipment. Follow the manufacturer's instructions for "
    "the bomb, the calorimeter and the heaters, the pressure-vessel, electrical and chemical "
    "safety codes that apply where you work, and your laboratory's licensed practice "
    "(pressure ratings, periodic testing, shields, eye protection). calwork computes results "
    "from data; it does not make a procedure safe."
)
