"""Pure numpy acoustic indicator functions (no I/O, no state).

One module per concept: :mod:`levels` (energy averages, dB sums and differences),
:mod:`percentiles` (LN), :mod:`periods` (splitting at period boundaries, Lden / Ldn /
CNEL), :mod:`background` (residual correction), :mod:`rating`, :mod:`weighting`
(IEC 61672-1 A / C / Z), :mod:`spectra` (band spectra, tonal screening, low-frequency
content), :mod:`propagation` and :mod:`exposure` (LEX,8h).
"""

from surveytools.indicators.background import SPECIFIC_BASES, residual_correction
from surveytools.indicators.exposure import ACTION_VALUE_NAMES, exceeds_action_values, lex_8h
from surveytools.indicators.levels import (
    energy_average,
    energy_difference,
    energy_sum,
    from_energy,
    grouped_energy_average,
    grouped_max,
    grouped_valid_duration,
    to_energy,
)
from surveytools.indicators.percentiles import (
    COMBINE_METHODS,
    combine_logged_levels,
    exceedance_level,
    exceedance_levels,
    grouped_exceedance_levels,
    whole_db_distribution,
)
from surveytools.indicators.periods import (
    cnel,
    lden,
    ldn,
    penalised_day_evening_night,
    scheme_hours,
    split_at_boundaries,
)
from surveytools.indicators.propagation import line_source_level_at, point_source_level_at
from surveytools.indicators.rating import (
    IMPACT_INDICATIONS,
    excess_over_background,
    impact_indication,
    rating_level,
)
from surveytools.indicators.spectra import (
    grouped_band_spectra,
    low_frequency_content,
    one_third_octave_tonal_correction,
    screen_tones,
    tone_thresholds,
)
from surveytools.indicators.weighting import (
    NOMINAL_THIRD_OCTAVE_HZ,
    WEIGHTINGS,
    a_weighting,
    band_total,
    c_weighting,
    exact_band_frequency,
    z_weighting,
)

__all__ = [
    "ACTION_VALUE_NAMES",
    "COMBINE_METHODS",
    "IMPACT_INDICATIONS",
    "NOMINAL_THIRD_OCTAVE_HZ",
    "SPECIFIC_BASES",
    "WEIGHTINGS",
    "a_weighting",
    "band_total",
    "c_weighting",
    "cnel",
    "combine_logged_levels",
    "energy_average",
    "energy_difference",
    "energy_sum",
    "exact_band_frequency",
    "exceedance_level",
    "exceedance_levels",
    "exceeds_action_values",
    "excess_over_background",
    "from_energy",
    "grouped_band_spectra",
    "grouped_energy_average",
    "grouped_exceedance_levels",
    "grouped_max",
    "grouped_valid_duration",
    "impact_indication",
    "lden",
    "ldn",
    "lex_8h",
    "line_source_level_at",
    "low_frequency_content",
    "one_third_octave_tonal_correction",
    "penalised_day_evening_night",
    "point_source_level_at",
    "rating_level",
    "residual_correction",
    "scheme_hours",
    "screen_tones",
    "split_at_boundaries",
    "to_energy",
    "tone_thresholds",
    "whole_db_distribution",
    "z_weighting",
]
