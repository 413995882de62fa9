"""The cautions every report ends with (always present, never optional).

They state the range of conditions the conclusions rest on, that extrapolating a rate
law beyond them (in particular to plant scale) is not supported, and that scale-up
and thermal-hazard decisions belong to reaction calorimetry and the site's
process-safety review under local codes and licensed process-safety practice
(common practice in process chemistry; e.g. F. Stoessel, *Thermal Safety of Chemical
Processes*, Wiley-VCH, 2008, ch. 1). Invented data are said to be invented.

Examples
--------
>>> from mechfit.report.data import StudyRanges
>>> ranges = StudyRanges({"A": (0.01, 0.1)}, temperatures=(298.15, 318.15), n_runs=4)
>>> text = " ".join(cautions(ranges, invented=True))
>>> "298.15 K to 318.15 K" in text, "plant scale" in text, "invented" in text
(True, True, True)
"""

from __future__ import annotations

from scipy import constants

from mechfit.report.data import StudyRanges
from mechfit.report.tables import format_number


def _kelvin_and_celsius(kelvin: float) -> str:
    return f"{kelvin:.2f} K ({kelvin - constants.zero_Celsius:.1f} °C)"


def conditions_sentence(ranges: StudyRanges) -> str:
    """The conditions covered, in one sentence built from the ranges passed in."""
    parts = []
    if ranges.concentrations:
        unit = ranges.concentration_unit
        items = []
        for species, (low, high) in ranges.concentrations.items():
            if low == high:
                items.append(f"[{species}]0 = {format_number(low)} {unit}")
            else:
                items.append(f"[{species}]0 from {format_number(low)} to "
                             f"{format_number(high)} {unit}")
        parts.append("initial concentrations " + "; ".join(items))
    else:
        parts.append("initial concentrations not recorded")
    if ranges.temperatures is None:
        parts.append("temperature not recorded")
    else:
        low, high = ranges.temperatures
        if ranges.temperature_varies:
            parts.append(f"temperatures from {low:.2f} K to {high:.2f} K "
                         f"({low - constants.zero_Celsius:.1f} °C to "
                         f"{high - constants.zero_Celsius:.1f} °C)")
        else:
            parts.append(f"one temperature, {_kelvin_and_celsius(low)}")
    if ranges.times is not None:
        parts.append(f"observation times from {format_number(ranges.times[0])} to "
                     f"{format_number(ranges.times[1])} {ranges.time_unit}")
    runs = f"{ranges.n_runs} run{'s' if ranges.n_runs != 1 else ''}"
    return (f"These conclusions hold only inside the conditions studied ({runs}): "
            + "; ".join(parts) + ".")


def cautions(ranges: StudyRanges, *, invented: bool = False,
             extra: tuple[str, ...] | list[str] = ()) -> list[str]:
    """The cautions, one paragraph each, in the order the report prints them."""
    out = [
        conditions_sentence(ranges),
        "Extrapolating a rate law or its constants beyond these conditions (other "
        "concentrations, temperatures, solvents, mixing or heat-transfer regimes), and in "
        "particular to plant scale, is not supported by this analysis.",
        "A mechanism that fits these data is supported by them, not proven: a mechanism "
        "that is not among the candidates may describe the data as well.",
        "Scale-up and thermal-hazard decisions need reaction calorimetry and the site's "
        "process-safety review, carried out under local codes and licensed process-safety "
        "practice. Nothing in this report replaces them.",
    ]
    if invented:
        out.append("The data in this report are invented for a demonstration; they do not "
                   "describe any real reaction and must not be used as such.")
    out.extend(extra)
    return out
