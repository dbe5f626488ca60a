"""Reference flow sites: typical adult values to fall back on when a patient's are unknown.

Public names: :class:`FlowSite`, :data:`NORMAL_ADULT_AORTA`.
"""

from __future__ import annotations

from dataclasses import dataclass

from eddyphone.physics.blood import NORMAL_HEMATOCRIT


@dataclass(frozen=True)
class FlowSite:
    """Typical geometry and flow at one site of the circulation (SI units).

    Attributes
    ----------
    name : str
        Human-readable name of the site.
    diameter_m : float
        Lumen diameter, m.
    peak_velocity_m_s : float
        Peak systolic velocity, m/s.
    mean_flow_m3_s : float
        Time-averaged volume flow, m3/s.
    heart_rate_hz : float
        Heart rate, Hz (beats per second).
    hematocrit : float
        Hematocrit, volume fraction.
    source : str
        Where the values come from.
    """

    name: str
    diameter_m: float
    peak_velocity_m_s: float
    mean_flow_m3_s: float
    heart_rate_hz: float
    hematocrit: float
    source: str


#: Ascending aorta of a resting healthy adult. Diameter 25 mm (adult ascending aorta about
#: 25-35 mm), peak systolic velocity 1.1 m/s (normal 1.0-1.7 m/s by Doppler), cardiac
#: output 5 L/min at 72 beats/min: all common practice. With the default blood properties
#: this gives a peak Reynolds number of about 7,600, inside the 5,700-8,900 measured in
#: normal human ascending aortas by Stein & Sabbah (1976, Circulation Research).
NORMAL_ADULT_AORTA = FlowSite(
    name="ascending aorta, healthy adult at rest",
    diameter_m=0.025,
    peak_velocity_m_s=1.1,
    mean_flow_m3_s=5e-3 / 60.0,
    heart_rate_hz=72.0 / 60.0,
    hematocrit=NORMAL_HEMATOCRIT,
    source="typical adult values (common practice); peak Re checked against Stein & Sabbah 1976",
)
