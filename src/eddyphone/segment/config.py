"""Settings of the segmenter (:class:`SegmentConfig`)."""

from __future__ import annotations

from dataclasses import dataclass

from eddyphone.errors import ParameterError
from eddyphone.rhythm import IRREGULAR_RR_CV


@dataclass(frozen=True)
class SegmentConfig:
    """Segmentation settings.

    Attributes
    ----------
    feature_fs : float
        Feature frame rate in Hz (50: one frame per 20 ms).
    min_bpm, max_bpm : float
        Heart-rate search range of the autocorrelation.
    s1_duration_s, s2_duration_s : (float, float)
        Mean and sd of the S1 and S2 durations (Schmidt et al. 2010, from memory:
        122 +/- 22 ms and 92 +/- 22 ms).
    systole_sd_s : float
        Spread of the systole (S1 end to S2 start) duration, plus 5 % of its mean.
    diastole_sd_fraction, diastole_sd_floor_s : float
        Diastole duration sd = fraction * mean + floor (before the RR spread is added).
    duration_floor_weight : float
        Weight of a uniform floor mixed into every duration law (robustness to
        premature beats and pauses).
    irregular_rr_cv : float
        RR coefficient of variation above which the rhythm is flagged irregular.
    refine_hr_change : float
        Relative change of heart rate between the autocorrelation and the first
        decoding that triggers a second decoding with the measured rate.
    chunk_s, overlap_s : float
        Long runs are decoded in chunks of ``chunk_s`` overlapping by ``overlap_s``
        (heart rate re-estimated per chunk; memory stays bounded).
    min_run_s : float
        Usable stretches shorter than this are skipped (too short for a rhythm).
    adapt_weight : float
        Weight (0-1) of emissions re-fitted to the recording's own first decoding
        (0 switches this adaptation off).
    diastole_tail_periods : float
        The diastole may last up to this many beat periods beyond its mean (carried
        by the uniform floor), so a pause or a long cycle of an irregular rhythm is
        not filled with an invented beat.
    regular_diastole_tail_periods : float
        The same for a rhythm decoded as regular (no RR spread): long enough for a
        premature beat's compensatory pause (about 0.3-0.5 of a period beyond the
        mean diastole), too short to pass over a whole beat whose sounds are faint.
    doubtful_beat_support, doubtful_beat_margin : float
        In an irregular rhythm a beat whose support (0-1, geometric mean of its
        segments' frame support) is below ``doubtful_beat_support`` and at least
        ``doubtful_beat_margin`` below the median beat is folded into the diastole,
        unless that would leave an interval longer than ``doubtful_beat_max_merged_rr``
        median RR (then the beat is more likely real and weak).
    doubtful_beat_quiet_db, doubtful_beat_quiet_merged_rr : float
        A beat of an irregular rhythm whose louder sound (S1 or S2, mean power) is more
        than ``doubtful_beat_quiet_db`` below the median beat's is folded the same way,
        whatever its frame support, unless that would leave an interval longer than
        ``doubtful_beat_quiet_merged_rr`` median RR.
    emission_model : str or None
        Path of an emission model JSON; None uses the shipped model.
    missed_sound_cost : float
        Competing rates are scored by the mean frame log-likelihood of their decoding
        less this times the fraction of its systoles and diastoles that hold a sound
        it left unlabelled (half the true rate leaves whole S1-S2 pairs there; a
        murmur or an S3 leaves less).
    half_rate_margin : float
        A decoding that looks like one sound per beat read as S1 + S2 (see
        ``halving.looks_halved``) gives way to the doubled rate unless that scores
        more than this below it (same score, per frame).
    slip_min_evidence : float
        At a long gap between sounds where the S1/S2 orientation votes on either side
        are both at least this strong and opposite, the labels slipped (a sound
        passed over): each side is decoded and oriented again on its own (see
        ``segment.slips``; 0 switches this off).
    """

    feature_fs: float = 50.0
    min_bpm: float = 40.0
    max_bpm: float = 200.0
    s1_duration_s: tuple[float, float] = (0.122, 0.022)
    s2_duration_s: tuple[float, float] = (0.092, 0.022)
    systole_sd_s: float = 0.025
    diastole_sd_fraction: float = 0.07
    diastole_sd_floor_s: float = 0.02
    duration_floor_weight: float = 0.03
    irregular_rr_cv: float = IRREGULAR_RR_CV
    refine_hr_change: float = 0.05
    chunk_s: float = 60.0
    overlap_s: float = 6.0
    min_run_s: float = 2.5
    adapt_weight: float = 0.5
    diastole_tail_periods: float = 1.0
    regular_diastole_tail_periods: float = 0.7
    doubtful_beat_support: float = 0.7
    doubtful_beat_margin: float = 0.15
    doubtful_beat_max_merged_rr: float = 1.6
    doubtful_beat_quiet_db: float = 6.0
    doubtful_beat_quiet_merged_rr: float = 2.0
    emission_model: str | None = None
    missed_sound_cost: float = 0.3
    half_rate_margin: float = 0.15
    slip_min_evidence: float = 2.0

    def __post_init__(self) -> None:
        if not 10.0 <= self.feature_fs <= 500.0:
            raise ParameterError(f"feature_fs={self.feature_fs} must lie in 10-500 Hz")
        if not 20.0 <= self.min_bpm < self.max_bpm <= 300.0:
            raise ParameterError(
                f"min_bpm={self.min_bpm}, max_bpm={self.max_bpm} must satisfy "
                "20 <= min_bpm < max_bpm <= 300")
        if self.chunk_s < 4 * self.overlap_s or self.overlap_s < 2.0:
            raise ParameterError(
                f"chunk_s={self.chunk_s} must be at least 4 x overlap_s={self.overlap_s}, "
                "and overlap_s at least 2 s")
        if not 0.0 <= self.duration_floor_weight < 0.5:
            raise ParameterError(
                f"duration_floor_weight={self.duration_floor_weight} must lie in [0, 0.5)")
