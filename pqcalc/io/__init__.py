"""Readers and writers: captures (CSV, COMTRADE), installation files, exports."""

from .capture import CsvOptions, RawRecord, load_capture, read_csv, record_to_waveform

__all__ = ["CsvOptions", "RawRecord", "load_capture", "read_csv", "record_to_waveform"]
