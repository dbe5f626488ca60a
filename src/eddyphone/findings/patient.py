"""Patient view: several recordings of one patient at different auscultation sites.

Recordings are peak-normalised one by one, so absolute levels cannot be compared
across them; a murmur's loudness at each site is taken relative to S1 of that same
recording (``Murmur.level_db_re_s1``; S1 is heard at every site, and a recording's
own S1 cancels its gain and most of its device response). Murmurs are matched
across sites by phase (systolic, diastolic, continuous). A murmur called present in
only one of several recordings is reported as possible (see
:data:`MIN_RECORDINGS_PRESENT`).

Public names
------------
summarise_patient(analyses, *, patient_id=None) -> PatientSummary
PatientSummary, PatientMurmur
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

from eddyphone.errors import InputError
from eddyphone.findings.records import SOUND_NAMES, Findings, Murmur

#: When a patient has several recordings, a murmur must be called present in at least
#: this many of them to be present for the patient, unless the one recording shows it
#: in most beats (:data:`ONE_RECORDING_CONSISTENCY`) or it is a rumble at the apex
#: (:func:`_apical_rumble`); otherwise it is reported as possible (patient presence
#: 'uncertain'). A turbulent murmur spreads beyond the
#: site where it is loudest; one recording's false call does not repeat at another
#: site. Simulated four-site patients (``bench/bench_patient.py``, n=600; seeds 1-2
#: to tune, see docs/findings.md for the held-out seeds): murmurs present in one
#: recording only were wrong (no murmur, or another phase) more often than right.
MIN_RECORDINGS_PRESENT = 2
#: Consistency (share of beats) from which a murmur present in one recording only
#: still counts for the patient: firmly locked to the cycle there (our own edge,
#: tuned on the simulated patients of seeds 1-2 among 0.8, 0.9 and 1.0).
ONE_RECORDING_CONSISTENCY = 0.8


@dataclass(frozen=True)
class PatientMurmur:
    """One murmur across the sites of a patient.

    Attributes
    ----------
    phase : str
    loudest_site : str
    level_db_by_site : mapping site -> float
        Level re the same recording's S1 where it was heard.
    heard_at, not_heard_at : tuple of str
        Sites where it was present or uncertain / where it was absent.
    present_at : tuple of str
        Sites where it was called present.
    possible : bool
        Present in only one of several recordings and there in under
        :data:`ONE_RECORDING_CONSISTENCY` of the beats (:data:`MIN_RECORDINGS_PRESENT`):
        reported as a possible murmur, not as present for the patient.
    spread : str
        How it spreads, in words (e.g. 'loudest at the aortic area, 4 dB softer at
        the pulmonic area, not heard at the mitral area').
    description : str
        The loudest site's description.
    murmur : Murmur
        The loudest site's murmur.
    """

    phase: str
    loudest_site: str
    level_db_by_site: Mapping[str, float]
    heard_at: tuple[str, ...]
    not_heard_at: tuple[str, ...]
    spread: str
    description: str
    murmur: Murmur
    present_at: tuple[str, ...] = ()
    possible: bool = False

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready values."""
        return {"phase": self.phase, "loudest_site": self.loudest_site,
                "level_db_re_s1_by_site": {k: round(v, 1) for k, v in
                                                     self.level_db_by_site.items()},
                "heard_at": list(self.heard_at), "not_heard_at": list(self.not_heard_at),
                "present_at": list(self.present_at), "possible": self.possible,
                "spread": self.spread, "description": self.description,
                "loudest_finding": self.murmur.to_dict()}


@dataclass(frozen=True)
class PatientSummary:
    """Patient-level summary over recordings at several sites.

    Attributes
    ----------
    patient_id : str or None
    sites : tuple of str
        Site of each recording, in input order.
    presence : {'present', 'absent', 'uncertain'}
        'uncertain' also when every murmur is only possible.
    murmurs : tuple of PatientMurmur
        Present before possible, loudest first.
    extra_sounds : mapping kind -> tuple of sites
    summary : str
        One paragraph in the trade's words.
    per_site : mapping site -> dict
        Each recording's ``Findings.summary_dict()``.
    """

    patient_id: str | None
    sites: tuple[str, ...]
    presence: str
    murmurs: tuple[PatientMurmur, ...]
    extra_sounds: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    summary: str = ""
    per_site: Mapping[str, dict] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready values (the patient-level part of the output)."""
        return {"patient_id": self.patient_id, "sites": list(self.sites),
                "presence": self.presence,
                "murmurs": [m.to_dict() for m in self.murmurs],
                "extra_sounds": {k: list(v) for k, v in self.extra_sounds.items()},
                "summary": self.summary,
                "per_site": dict(self.per_site)}


def _site_of(item: Any, i: int) -> tuple[str, str | None]:
    """An analysis's site (from the context or the recording) and posture."""
    posture = getattr(getattr(item, "recording", None), "posture", None)
    for obj in (getattr(item, "context", None), getattr(item, "recording", None)):
        site = getattr(obj, "site", None)
        if site:
            return str(site), posture
    return f"recording {i + 1}", posture


def _pairs(analyses: Any) -> list[tuple[str, Findings]]:
    """(label, findings) per recording. A site recorded more than once is told apart by
    posture where given ('mitral, left lateral'), else by number ('mitral (2)')."""
    if isinstance(analyses, Mapping):
        items = [(str(k), None, v) for k, v in analyses.items()]
    else:
        items = []
        for i, a in enumerate(analyses):
            if isinstance(a, tuple) and len(a) in (2, 3):
                items.append((str(a[0]), a[1] if len(a) == 3 else None, a[-1]))
            elif hasattr(a, "findings"):
                items.append((*_site_of(a, i), a.findings))
            else:
                raise InputError(None, f"item {i} of the patient's recordings is a "
                                 f"{type(a).__name__}",
                                 "pass Analysis objects, (site, Findings) pairs, (site, "
                                 "posture, Findings) triples or a {site: Findings} mapping")
    items = [(site, posture, f) for site, posture, f in items if f is not None]
    repeated = Counter(site for site, _, _ in items)
    out: list[tuple[str, Findings]] = []
    used: set[str] = set()
    for site, posture, f in items:
        base = f"{site}, {posture}" if repeated[site] > 1 and posture else site
        label, n = base, 1
        while label in used:
            n += 1
            label = f"{base} ({n})"
        used.add(label)
        out.append((label, f))
    return out


def _apical_rumble(phase: str, present: list[tuple[str, Murmur]]) -> bool:
    """A low-pitched diastolic murmur present at the mitral area only: the rumble of a
    narrowed inflow valve stays at the apex (common practice), so one recording there
    is all it gives. Simulated four-site patients (bench/bench_patient.py, seeds 1-2
    to tune, 3-4 held out, both beat sources, SNR >= 10 dB): carried murmurs found
    655 -> 659 and 601 -> 605, murmur-free patients called present 33 -> 33 and
    22 -> 23."""
    return phase == "diastolic" and all(
        _site_of_label(site)[0] == "mitral" and m.pitch == "low"
        for site, m in present)


def _site_of_label(label: str) -> tuple[str, str]:
    """A site label split into the site and what tells repeats apart (see
    :func:`_pairs`): 'mitral, sitting (2)' -> ('mitral', ', sitting (2)')."""
    site = label.split(",")[0].split(" (")[0]
    return site, label[len(site):]


def _area(label: str) -> str:
    """'mitral' -> 'the mitral area'; 'mitral, sitting' -> 'the mitral area, sitting'."""
    site, rest = _site_of_label(label)
    return f"the {site} area{rest}" if site in ("aortic", "pulmonic", "tricuspid", "mitral") \
        else label


def summarise_patient(analyses: Iterable | Mapping, *, patient_id: str | None = None
                      ) -> PatientSummary:
    """Combine one patient's recordings from several sites.

    Parameters
    ----------
    analyses : iterable or mapping
        :class:`eddyphone.pipeline.Analysis` objects (site from the context or the
        recording, posture from the recording), ``(site, Findings)`` pairs, ``(site,
        posture, Findings)`` triples, or a ``{site: Findings}`` mapping.
    patient_id : str, optional

    Returns
    -------
    PatientSummary
    """
    pairs = _pairs(analyses)
    if not pairs:
        raise InputError(None, "no recordings with findings were given for the patient",
                         "pass at least one analysed recording")
    sites = tuple(s for s, _ in pairs)
    murmurs: list[PatientMurmur] = []
    for phase in ("systolic", "diastolic", "continuous"):
        found = {s: next((m for m in f.murmurs if m.phase == phase), None)
                 for s, f in pairs}
        heard = {s: m for s, m in found.items() if m is not None}
        if not any(m.presence == "present" for m in heard.values()):
            continue
        levels = {s: float(m.level_db_re_s1) for s, m in heard.items()}
        loud = max(heard, key=lambda s: (heard[s].presence == "present", levels[s]))
        others = sorted((s for s in heard if s != loud), key=lambda s: -levels[s])
        not_heard = tuple(s for s in sites if s not in heard)
        parts = [f"loudest at {_area(loud)}"]
        for s in others:
            d = levels[loud] - levels[s]
            parts.append(f"{d:.0f} dB softer at {_area(s)}" if d >= 1.0
                         else f"about as loud at {_area(s)}")
        if not_heard:
            parts.append("not heard at " + ", ".join(_area(s) for s in not_heard))
        present_at = tuple(s for s in [loud] + others if heard[s].presence == "present")
        possible = (len(pairs) > 1 and len(present_at) < MIN_RECORDINGS_PRESENT
                    and max(heard[s].consistency for s in present_at)
                    < ONE_RECORDING_CONSISTENCY
                    and not _apical_rumble(phase, [(s, heard[s]) for s in present_at]))
        if possible:
            parts.append(f"called present in {len(present_at)} of the {len(pairs)} "
                         f"recordings only, in under {ONE_RECORDING_CONSISTENCY:.0%} of its "
                         "beats, so possible for the patient")
        murmurs.append(PatientMurmur(
            phase=phase, loudest_site=loud, level_db_by_site=levels,
            heard_at=tuple([loud] + others), not_heard_at=not_heard,
            spread="; ".join(parts), description=heard[loud].describe(),
            murmur=heard[loud], present_at=present_at, possible=possible))
    murmurs.sort(key=lambda m: (m.possible, -m.level_db_by_site[m.loudest_site]))
    presences = [f.presence for _, f in pairs]
    if any(not m.possible for m in murmurs):
        presence = "present"
    elif all(p == "absent" for p in presences):
        presence = "absent"
    else:
        presence = "uncertain"
    extras: dict[str, list[str]] = {}
    possible: set[tuple[str, str]] = set()  # (kind, site) reported only as possible
    for s, f in pairs:
        for e in f.extra_sounds:
            extras.setdefault(e.kind, []).append(s)
            if e.possible:
                possible.add((e.kind, s))
    if murmurs:
        text = " ".join(("Possible: " if m.possible else "")
                        + f"{m.description[0].upper()}{m.description[1:]}; {m.spread}."
                        for m in murmurs)
    elif presence == "absent":
        text = f"No murmur at {', '.join(_area(s) for s in sites)}."
    else:
        unc = [s for s, f in pairs if f.presence == "uncertain"]
        text = ("No murmur called with confidence; possible murmur or unreadable "
                f"recording at {', '.join(_area(s) for s in unc)}.")
    if extras:
        text += " Extra sounds: " + "; ".join(
            f"{SOUND_NAMES.get(k, k)} at "
            + ", ".join(_area(s) + (" (possible)" if (k, s) in possible else "") for s in v)
            for k, v in extras.items()) + "."
    return PatientSummary(patient_id=patient_id, sites=sites, presence=presence,
                          murmurs=tuple(murmurs),
                          extra_sounds={k: tuple(v) for k, v in extras.items()},
                          summary=text,
                          per_site={s: f.summary_dict() for s, f in pairs})
