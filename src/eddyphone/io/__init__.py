"""Loading stethoscope recordings.

Public functions
----------------
load(path, ...)        -> Recording from WAV/FLAC/OGG/MP3/M4A or a WFDB header
from_array(x, fs, ...) -> Recording from samples already in memory
read_segments_csv(path) / write_segments_csv(path, rows)
"""

from eddyphone.io.labels import read_segments_csv, write_segments_csv
from eddyphone.io.load import from_array, load

__all__ = ["load", "from_array", "read_segments_csv", "write_segments_csv"]
