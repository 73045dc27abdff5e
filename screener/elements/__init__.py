"""Element sets in: TLE, CCSDS OMM (KVN, XML, CSV, JSON) and CCSDS OEM ephemerides."""

from .catalog import LoadReport, iter_file, load_elements, stale_records
from .oem import Oem, OemCovariance, OemSegment, read_oem, write_oem
from .record import ElementSet, Source
from .tle import catalog_id_to_int, checksum, format_tle, int_to_alpha5

__all__ = [
    "ElementSet", "Source", "LoadReport", "load_elements", "iter_file", "stale_records",
    "Oem", "OemSegment", "OemCovariance", "read_oem", "write_oem",
    "catalog_id_to_int", "checksum", "format_tle", "int_to_alpha5",
]
