"""Mechanism explanations: every finding mapped to its likely physical cause.

For each murmur the explainer ranks five candidate mechanisms (``high_flow``,
``narrowed_orifice``, ``low_viscosity``, ``wall_irregularity``,
``no_flow_disturbance``) by the evidence of the sound and of the patient context, and
gives each the flow physics in a few sentences with the numbers computed through
:mod:`eddyphone.physics`: Reynolds number at peak flow against normal and against the
transition range, viscosity at the patient's hematocrit, the jet velocity implied by
the murmur's pitch through Strouhal scaling and its Bernoulli pressure drop. Missing
context is replaced by stated defaults, and the explanation says how that limits it.

Public names
------------
explain
    Explain one recording's findings -> :class:`Explanation`.
explain_patient
    Combine several recordings (sites) of one patient.
render_text
    Readable block for the terminal.
Mechanism, Explanation, ExplainConfig, MECHANISMS
"""

from eddyphone.explain.candidates import MECHANISMS
from eddyphone.explain.config import ExplainConfig
from eddyphone.explain.core import explain, explain_patient
from eddyphone.explain.model import Explanation, Mechanism
from eddyphone.explain.text import render_text

__all__ = [
    "MECHANISMS",
    "ExplainConfig",
    "Explanation",
    "Mechanism",
    "explain",
    "explain_patient",
    "render_text",
]
