"""Synthetic stethoscope recordings with exact ground truth.

A recording is described by a :class:`CaseSpec` (rhythm, sounds, an optional
:class:`MurmurSpec` given by cause and flow parameters, recording chain, noise) and
made by :func:`generate`; :func:`write` stores it as a WAV file with
``<id>.truth.csv`` and ``<id>.truth.json``. :func:`demo_specs` is the demo set in
``sample_audio/`` and :func:`benchmark_specs` / :func:`write_benchmark` a graded set
for benchmarking segmentation and murmur findings.

Public names
------------
CaseSpec, MurmurSpec, MURMUR_CAUSES, SITES
generate, Simulated
write, truth_rows
demo_specs, benchmark_specs, site_specs, write_benchmark, write_demo
"""

from eddyphone.simulate.cases import (
    benchmark_specs,
    demo_specs,
    site_specs,
    write_benchmark,
    write_demo,
)
from eddyphone.simulate.generator import Simulated, generate
from eddyphone.simulate.spec import MURMUR_CAUSES, SITES, CaseSpec, MurmurSpec
from eddyphone.simulate.writer import truth_rows, write

__all__ = [
    "MURMUR_CAUSES",
    "SITES",
    "CaseSpec",
    "MurmurSpec",
    "Simulated",
    "benchmark_specs",
    "demo_specs",
    "generate",
    "site_specs",
    "truth_rows",
    "write",
    "write_benchmark",
    "write_demo",
]
