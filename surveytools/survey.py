"""The :class:`Survey`: validated readings of one monitoring position, ready to assess.

Produced by ``surveytools.validation.build_survey`` from a
:class:`~surveytools.inputs.raw.RawWorkbook` and the settings; consumed by
``surveytools.assessment``. Nothing is dropped on the way: a reading that cannot be used
keeps its spreadsheet row and its reason, either as an exclusion mask over
:attr:`Survey.readings` or, when it cannot even be placed in time, in
:attr:`Survey.unplaced`.

Readings columns (one row per reading, sorted by ``start_ms``):

=================  ========  ================================================================
column             dtype     meaning
=================  ========  ================================================================
``row``            int64     spreadsheet row number in the Readings sheet
``start_ms``       int64     interval start, UTC, milliseconds since 1970-01-01
``duration_ms``    int64     interval length [ms] (> 0)
``offset_s``       int32     UTC offset of the site's civil time at ``start_ms`` [s]
``LAeq`` ...       float64   every level column present, canonical names (see
                             ``surveytools.inputs.columns``); NaN where empty or unusable [dB]
``overload``       bool      meter flagged an overload (False where the column is absent)
``operating``      boolean   assessed source running (pandas nullable; NA = not stated)
``note``           object    technician's note text, or None
=================  ========  ================================================================
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
import pandas as pd

from surveytools.provenance import SourceInfo

if TYPE_CHECKING:  # imported for annotations only: validation imports this module
    from surveytools.validation.findings import Finding

Scope = Literal["all", "background"]


@dataclass(frozen=True)
class Exclusion:
    """Readings excluded for one reason.

    Parameters
    ----------
    reason : str
        Stable reason code (``"wind"``, ``"rain"``, ``"rain-settle"``, ``"technician"``,
        ``"overload"``, ``"level-invalid"``, ``"level-out-of-range"``, ``"calibration-drift"``,
        ``"duplicate"``, ``"overlap"`` ...).
    label : str
        Short human text shown beside each excluded row (``"wind 6.2 m/s > 5.0 m/s"`` style
        text is per span; this is the general label, e.g. ``"wind above limit"``).
    scope : {"all", "background"}
        ``all``: the reading is left out of every figure. ``background``: left out of
        background (LA90) figures only.
    mask : numpy.ndarray of bool
        Aligned with :attr:`Survey.readings` rows.
    """

    reason: str
    label: str
    scope: Scope
    mask: np.ndarray


@dataclass
class Survey:
    """Validated readings and metadata of one monitoring position.

    Parameters
    ----------
    source : SourceInfo
        The input file.
    metadata : dict
        Survey sheet values under canonical keys: ``position`` (str), ``site``,
        ``time_zone`` (IANA name or ``"UTC+01:00"`` style fixed offset), ``clock``
        (``"local"``, ``"UTC"`` or a fixed offset), ``meter_class`` (1 or 2),
        ``calibration_before_db``, ``calibration_after_db``, ``calibrator_level_db``,
        ``microphone`` (``"free-field"`` / ``"facade"``), ``height_m``, ``notes`` (str),
        plus any extra keys found (kept as text).
    readings : pandas.DataFrame
        See the module docstring for the columns.
    level_columns : dict of str to str
        Canonical level column name -> column letter in the Readings sheet.
    readings_sheet : str
        Readings sheet name as in the workbook.
    exclusions : list of Exclusion
        Every reason a reading is left out, with its scope.
    unplaced : pandas.DataFrame
        Rows that could not be placed in time: columns ``row`` (int64), ``reason`` (str)
        and ``raw`` (str, the offending cell text).
    weather : pandas.DataFrame or None
        Weather intervals: ``row``, ``start_ms``, ``duration_ms``, ``wind_m_s``, ``rain_mm``.
    findings : list of Finding
        Reader and validation findings, sorted.
    finding_counts : dict of str to int
        Full count per code (including findings beyond the per-code cap).
    finding_rows : dict of (str, str or None) to numpy.ndarray
        Row numbers of every located finding per (code, sheet), stored or beyond the cap.
    """

    source: SourceInfo
    metadata: dict[str, Any]
    readings: pd.DataFrame
    level_columns: dict[str, str]
    readings_sheet: str = "Readings"
    exclusions: list[Exclusion] = field(default_factory=list)
    unplaced: pd.DataFrame = field(
        default_factory=lambda: pd.DataFrame({"row": pd.Series(dtype="int64"),
                                              "reason": pd.Series(dtype="object"),
                                              "raw": pd.Series(dtype="object")})
    )
    weather: pd.DataFrame | None = None
    findings: list[Finding] = field(default_factory=list)
    finding_counts: dict[str, int] = field(default_factory=dict)
    finding_rows: dict[tuple[str, str | None], np.ndarray] = field(default_factory=dict)

    def valid_mask(self, scope: Scope = "all") -> np.ndarray:
        """Return True for readings usable for ``scope`` figures.

        ``"all"``: not excluded by any ``all``-scope reason and LAeq is finite.
        ``"background"``: additionally not excluded by any ``background``-scope reason.
        """
        n = len(self.readings)
        ok = np.isfinite(self.readings["LAeq"].to_numpy(dtype=float)) if n else np.zeros(0, bool)
        for ex in self.exclusions:
            if ex.scope == "all" or scope == "background":
                ok &= ~ex.mask
        return ok

    def reasons_per_row(self) -> np.ndarray:
        """Return, per reading, the ``"; "``-joined reason codes that exclude it ("" if none).

        Vectorised over reasons (a handful), not over rows.
        """
        n = len(self.readings)
        out = np.full(n, "", dtype=object)
        for ex in self.exclusions:
            tag = ex.reason if ex.scope == "all" else f"{ex.reason} (background only)"
            sel = ex.mask
            has = out[sel] != ""
            out[sel] = np.where(has, out[sel] + "; " + tag, tag)
        return out
