"""Signatures of wvr._archive, the optional compiled part of the wvr package that reads and
writes casacore MeasurementSets (present when libwvr was built with casacore; see
wvr.HAS_MEASUREMENT_SETS). Import the names from ``wvr``. Bad input raises wvr.WvrValueError
naming the table, column or option and its value; the input MS is never written.
"""

import os
from typing import List, Optional, Tuple, TypedDict, Union

from wvr._core import Night

PathLike = Union[str, "os.PathLike[str]"]

class ClockOffsetDict(TypedDict):
    offset_s: float  # s, radiometer stamp - correlator time
    sigma_s: float  # s, 1-sigma
    rows: int  # calibrator phase rows used
    estimated: bool  # False: given, or too few rows (offset_s then 0)

class ImportReport(TypedDict):
    notes: List[str]  # what was assumed, skipped or flagged
    clock_offsets: List[ClockOffsetDict]  # [antenna] when applied, else empty

class MsExportDict(TypedDict):
    rows: int  # main-table rows written
    rows_flagged: int  # cross-correlation rows flagged for want of a correction
    notes: List[str]

class GainTableDict(TypedDict):
    solutions: int  # gain-table rows (time x spectral window x antenna)
    solutions_flagged: int  # rows flagged: no usable correction at that sample
    spectral_windows: List[int]  # MS windows with solutions
    radiometer_window: int  # the window left out; -1 when none was identified
    notes: List[str]

def import_measurement_set(
    ms_path: PathLike,
    *,
    brightness: str,  # "rayleigh-jeans" or "planck"
    radiometer_window: str = "",  # index or NAME; "": the window near 183.31 GHz
    radiometer: Optional[PathLike] = None,  # radiometer file replacing SPECTRAL_WINDOW's layout
    reference_antenna: int = -1,  # -1: every calibrator baseline
    array_centre: Optional[Tuple[float, float, float]] = None,  # lat_deg, lon_deg, height_m
    clock_offset: Union[None, str, float] = None,  # None, "none", "night", "per-antenna" or s
    clock_search_s: float = 6.0,  # s
    chunk_rows: int = 20000,
) -> Tuple[Night, ImportReport]: ...  # releases the GIL
def estimate_clock_offsets(
    night: Night, *, halfwidth_s: float = 6.0, per_antenna: bool = False
) -> List[ClockOffsetDict]: ...
def export_measurement_set(
    night: Night,
    ms_path: PathLike,
    output_path: PathLike,  # new MS: a copy with CORRECTED_DATA
    *,
    site: Optional[PathLike] = None,  # site file; None: the night's site policy
    overwrite: bool = False,
    chunk_rows: int = 20000,
) -> MsExportDict: ...  # releases the GIL
def export_gain_table(
    night: Night,
    ms_path: PathLike,
    output_path: PathLike,  # new casacore calibration table (complex antenna gains)
    *,
    site: Optional[PathLike] = None,  # site file; None: the night's site policy
    radiometer_window: str = "",  # window left out (index or NAME); "": the one near 183.31 GHz
    overwrite: bool = False,
    chunk_rows: int = 20000,
) -> GainTableDict: ...  # releases the GIL
