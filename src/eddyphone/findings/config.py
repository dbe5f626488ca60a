"""Findings settings and the documented constants behind the trade's words.

Every threshold is relative: to the quiet parts of the same beat, to the noise
floor of the same recording, or to the same beat's S1 and S2. Nothing depends on
the absolute level, which peak normalisation and the device response change.

Public names
------------
FindingsConfig
PITCH_BOUNDARIES_HZ, PITCH_BOUNDARIES_RE_NOISE_HZ, ANALYSIS_BANDS_HZ, TIMING_THIRDS,
GRADE_ANCHORS_DB
pitch_word(frequency_hz, boundaries_hz=PITCH_BOUNDARIES_HZ) -> str
"""

from __future__ import annotations

from dataclasses import dataclass

from eddyphone.errors import ParameterError

#: Pitch classes from the murmur's dominant frequency, in Hz: low below 150 Hz
#: (rumbles, best heard with the bell), high from 300 Hz (blowing regurgitant and
#: harsh high-velocity murmurs, best heard with the diaphragm), medium between.
#: Common practice, from memory (clinical auscultation texts place the bell's range
#: below about 150 Hz and high-pitched murmurs above about 300 Hz).
PITCH_BOUNDARIES_HZ = (150.0, 300.0)


def pitch_word(frequency_hz: float, boundaries_hz: tuple[float, float] = PITCH_BOUNDARIES_HZ
               ) -> str:
    """'low', 'medium' or 'high' from a frequency and the two pitch edges (by default
    :data:`PITCH_BOUNDARIES_HZ`).

    Examples
    --------
    >>> pitch_word(90.0), pitch_word(200.0), pitch_word(450.0)
    ('low', 'medium', 'high')
    """
    lo, hi = boundaries_hz
    if frequency_hz < lo:
        return "low"
    return "medium" if frequency_hz < hi else "high"


#: Pitch classes from where the murmur stands out of the recording's own noise floor
#: (``murmur.noise_relative_centroid_hz``, Hz): low below the first edge, high from
#: the second. The stethoscope's response filters the murmur and the floor alike, so
#: this measure follows the murmur's pitch at the chest surface where the absolute
#: spectrum (tilted by the device) does not. The measure weights frequencies by the
#: murmur's margin over the floor and has its own edges: the simulator's pitch edges
#: at the chest surface (180 and 400 Hz) mapped through a robust (Theil-Sen) fit of
#: log measure on log chest-surface centroid over benchmark seeds 1 and 2 (measure
#: about 1.4 times the centroid), rounded; checked on seed 4 (not on real
#: recordings). A reduced-major-axis fit (210/530 Hz) scored 2-10 points lower on
#: seeds 1, 2 and 4. The high edge was then refitted for accuracy on seeds 1 and 2
#: (n=600 draws, truth and segmenter beats): the mapped 540 Hz read 'high' for
#: medium and low murmurs behind high-pass chains (phone, diaphragm: measure 596-719
#: Hz, chest centroid 72-336 Hz), and no murmur of those draws is high at the chest;
#: 720 Hz lies just above the largest of those readings (719 Hz). Checked on seeds
#: 3-7: pitch +19 cases, none lost, over ten runs (tuning +2). The simulator's chest
#: wall leaves almost no murmur above 400 Hz (2 of 1372 detected murmurs over seeds
#: 1-7, both at 415 Hz and read medium with either edge), so this edge is not tested
#: on high-pitched murmurs; revisit it on real recordings. The absolute centroid and
#: dominant frequency are reported beside the word.
PITCH_BOUNDARIES_RE_NOISE_HZ = (240.0, 720.0)

#: Analysis bands (Hz) for per-beat band energies; the edges include the pitch
#: boundaries so band energies and the pitch class agree. Octave-wide above 75 Hz
#: (our own choice); the top band ends below the 900 Hz conditioning corner.
ANALYSIS_BANDS_HZ = ((25.0, 75.0), (75.0, 150.0), (150.0, 300.0), (300.0, 600.0),
                     (600.0, 900.0))

#: Timing words split a systolic or diastolic window into thirds (early, mid, late);
#: a murmur that fills the whole window (S1 to S2 for systole) is "holo". Common
#: practice (the usual division of systole and diastole into thirds).
TIMING_THIRDS = (1.0 / 3.0, 2.0 / 3.0)

#: Grade anchoring to the loudness of the heart sounds, after the three-step
#: anchoring "softer than S1/S2 / about as loud / louder than S1/S2" with grades
#: IV-VI reserved for a palpable thrill (Keren R et al., "Evaluation of a novel
#: method for grading heart murmur intensity", Arch Pediatr Adolesc Med 2005;
#: from memory). Level of the murmur re the louder of S1 and S2, in dB: below
#: ``faint`` -> I; faint..softer -> I-II; softer..louder -> II-III (about equal);
#: above ``louder`` -> III. The dB edges are our own reading of "about equal"
#: (+/- 4 dB, about the just-noticeable loudness step for a trained listener is
#: 1-2 dB; we allow for beat-to-beat spread).
GRADE_ANCHORS_DB = {"faint": -20.0, "softer": -6.0, "louder": 4.0}


@dataclass(frozen=True)
class FindingsConfig:
    """Findings settings.

    Attributes
    ----------
    bins_per_window : int
        Each systolic and diastolic window is cut into this many equal bins for
        the time profile (time-normalised, so beats of different length average).
    guard_s : float
        Trimmed from each end of a window so S1/S2 tails (and segmentation
        boundary error) do not leak in.
    frame_s, hop_s : float
        Short-time spectrum frame and hop.
    reference_percentile : float
        Per-beat, per-band reference: this percentile of the beat's bin powers
        (its quiet parts). Breathing and room noise raise the whole beat and cancel.
    excess_db : float
        A bin is active when its median excess over the reference (across beats)
        reaches this many dB.
    min_excess_db, z_active : float
        A bin is also active at ``min_excess_db`` or more when that excess stands
        ``z_active`` standard errors (across beats) clear of zero: long recordings
        show fainter murmurs.
    beat_excess_db : float
        A beat shows the murmur when its mean excess over the murmur's active bins
        reaches this many dB.
    min_murmur_s : float
        A murmur's active run lasts at least this long.
    min_sustained_s : float
        ... and stays within 6 dB of its peak at least this long (transients such
        as clicks or snaps are shorter).
    min_low_murmur_s : float
        The same for an excess confined below 150 Hz, where S3, S4 and the tails of
        S1/S2 live (they last 30-50 ms, ``physiology.S3_DURATION_S``; smeared by the
        32-ms frames they stay under about 80 ms).
    present_consistency, uncertain_consistency : float
        Fraction of usable beats that must show it for 'present' / 'uncertain'.
    min_beats : int
        Fewer usable beats than this: presence is 'uncertain'.
    min_beats_present : int
        A murmur is only called 'present' from at least this many usable beats.
    min_beat_confidence : float
        Beats with a lower segmentation confidence are not used.
    tonal_threshold : float
        Spectral peakedness (0-1) above which a murmur is called musical.
    diastolic_present_consistency : float
        Consistency a diastolic murmur needs to be called present (unless it stands
        clear of the same beats' null on average, see ``murmur.PAIRED_T``). Our own
        setting, from the simulator: murmur-free recordings behind a tilted chest
        piece with breathing or friction showed diastolic excesses in 60-64 % of
        their beats, while carried diastolic murmurs mostly show in far more. Set on
        seeds 1-4 (n=600, truth and segmenter beats: 9 false calls of 1600 fewer, one
        carried murmur lost), checked on seeds 5-7 (10 fewer of 1200, one lost).
    tonal_present_consistency : float
        Consistency a musical (tonal) murmur needs to be called present: tonal
        sounds in chest recordings are more often wheezes or room speech.
    min_level_db_re_heart_sounds : float
        Excess softer than this relative to S1/S2 is not called a murmur (about
        the softest sound a listener picks out beside the heart sounds; our own
        setting, 10 dB under the grade I edge).
    min_present_level_db_re_heart_sounds : float
        Softer murmurs are reported as 'uncertain', not 'present' (10 dB under the
        grade I edge of ``GRADE_ANCHORS_DB``; our own setting: at -25 dB it cost
        faint but consistent simulated murmurs).
    faint_level_db_re_heart_sounds, faint_present_consistency : float
        Murmurs softer than ``faint_level_db_re_heart_sounds`` (re S1/S2) need this
        consistency to be called present: a faint excess must be seen in most beats
        (our own settings; the 5 dB above ``min_present_level_db_re_heart_sounds``
        where simulated murmur-free recordings with wheezes or crackles still showed
        excesses in 60 % of their beats).
    """

    bins_per_window: int = 12
    guard_s: float = 0.02
    frame_s: float = 0.032
    hop_s: float = 0.004
    reference_percentile: float = 20.0
    excess_db: float = 4.0
    min_excess_db: float = 2.0
    z_active: float = 5.0
    beat_excess_db: float = 3.0
    min_murmur_s: float = 0.04
    min_sustained_s: float = 0.04
    min_low_murmur_s: float = 0.1
    present_consistency: float = 0.6
    uncertain_consistency: float = 0.35
    min_beats: int = 3
    min_beats_present: int = 5
    min_beat_confidence: float = 0.0
    tonal_threshold: float = 0.5
    diastolic_present_consistency: float = 0.65
    tonal_present_consistency: float = 0.85
    min_level_db_re_heart_sounds: float = -30.0
    min_present_level_db_re_heart_sounds: float = -30.0
    faint_level_db_re_heart_sounds: float = -25.0
    faint_present_consistency: float = 0.85

    def __post_init__(self) -> None:
        if not 4 <= self.bins_per_window <= 64:
            raise ParameterError(
                f"bins_per_window={self.bins_per_window} must lie in 4-64")
        if not 0.0 <= self.guard_s <= 0.1:
            raise ParameterError(f"guard_s={self.guard_s} must lie in 0-0.1 s")
        if not 0.0 < self.uncertain_consistency <= self.present_consistency <= 1.0:
            raise ParameterError(
                f"need 0 < uncertain_consistency={self.uncertain_consistency} <= "
                f"present_consistency={self.present_consistency} <= 1")
        for name in ("diastolic_present_consistency", "tonal_present_consistency",
                     "faint_present_consistency"):
            if not 0.0 < getattr(self, name) <= 1.0:
                raise ParameterError(f"{name}={getattr(self, name)} must lie in (0, 1]")
        if not 0.0 < self.reference_percentile < 50.0:
            raise ParameterError(
                f"reference_percentile={self.reference_percentile} must lie in (0, 50)")
