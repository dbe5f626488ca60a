"""The cautions every output carries."""

from __future__ import annotations

GENERAL_CAUTIONS: tuple[str, ...] = (
    "Decision support, not a diagnosis: every finding needs confirmation by a licensed "
    "clinician and must be handled under local protocols.",
    "Sound alone cannot show a palpable thrill, so murmur grades IV to VI are never assigned "
    "from audio; the grade given is a range on the six-grade scale anchored to the loudness "
    "of the heart sounds.",
    "The flow physics uses idealised relations for steady flow in straight rigid tubes; real "
    "valves and vessels are pulsatile, curved and compliant, so the numbers are estimates.",
    "An echocardiogram is the standard for assessing valve disease; a normal analysis does not "
    "rule it out.",
    "Automatic segmentation can fail on noisy, very fast or very irregular recordings: review "
    "the segmentation figure before relying on any timing.",
)
