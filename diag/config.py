"""The tunable thresholds of the analysis, in one place, each with its source or the reason for its value.

"Common practice" marks a value of the trade with no published source; "tuned" names the data it was chosen on.
"""
from __future__ import annotations

from dataclasses import dataclass

__all__ = ["AnalysisConfig"]


@dataclass(frozen=True)
class AnalysisConfig:
    """Tunable settings of the analysis (defaults suit 1-s and 15-min logs of 6-80 GHz hops).

    Fade segmentation (hysteresis): an event starts where the attenuation reaches ``fade_start_db`` and extends
    both ways while it stays at or above ``fade_end_db``; events closer than ``min_separation_s`` are merged;
    events shorter than ``min_duration_s`` are dropped unless they hold a below-threshold or signal-lost sample.

    Steps of the clear-sky level are detected once per channel (:func:`diag.analysis.steps.channel_steps`) at two
    sizes: ``step_min_db`` cuts the reference and makes level-shift events, ``level_change_min_db`` is the
    smallest step reported as a level change.
    """

    # fade events
    fade_start_db: float = 3.0        # common practice: 3 dB, the usual "faded" mark, well above 1-dB readout steps
    fade_end_db: float = 1.5          # common practice: hysteresis at half the start depth: noise cannot split a fade
    min_duration_s: float = 3.0       # common practice: shorter dips are readout noise/scintillation, not a fade
    min_separation_s: float = 60.0    # common practice: fades a minute apart are one episode (one storm cell, one
    #                                   multipath period)
    context_s: float = 300.0          # window before/after an event for upfades (common practice: 5 min, a few
    #                                   multipath fade durations, shorter than a rain front's approach)
    merge_gap_s: float = 0.0          # cross-channel grouping tolerance (0 = overlap only; common practice)
    # clear-sky reference
    block_s: float = 900.0            # the 15-min period of performance-monitoring logs (common practice)
    reference_window_h: float = 24.0  # one diurnal cycle: follows daily temperature swings (common practice)
    reference_quantile: float = 0.75  # fades only lower block medians; the upper quartile ignores them while they
    #                                   cover under ~3/4 of the window (see diag.analysis.reference docstring)
    min_block_coverage: float = 0.5   # a block with under half its samples has too few for a median (common practice)
    # steps of the clear-sky level
    step_min_db: float = 1.5          # tuned on the simulator's bench seeds: the reference follows knocked antennas
    #                                   from 1.5 dB (one 1-dB readout step plus noise is not a step)
    level_change_min_db: float = 2.0  # smallest step reported as a level change (common practice: twice the usual
    #                                   1-dB readout step)
    # rain plausibility
    rain_plausible_max_mmh: float = 200.0   # path-average rain rate above this is not rain (common practice: beyond
    #                                         the highest 1-min rates in ITU-R P.837 maps, from memory)
    # cause attribution: "posterior" (the default: ITU-R P.530 / P.838 hop priors times bounded evidence terms,
    # diag.analysis.classify and diag.analysis.attribution) or "rules" (the older ordered rulebook,
    # diag.analysis.rulebook, kept for comparison; it names causes the hop's physics rules out and calls most
    # real rain something else: docs/validation.md)
    attribution: str = "posterior"
    # the logs' local time zone (IANA name, from --tz): the clock of the posterior's hour term on hops whose links
    # table gives no site coordinates (with coordinates it reads local solar time from the mid-path longitude)
    local_tz: str | None = None
