"""Correlation of decoded surfaces across wells: wells tables, alignment, chaining.

- :mod:`~faciesseq.correlation.wells` reads and checks a wells table (name,
  position along a section or map coordinates, datum);
- :mod:`~faciesseq.correlation.align` ties two neighbouring wells' surface picks
  by an order-preserving dynamic-programming alignment;
- :mod:`~faciesseq.correlation.chain` chains the ties along each section into
  correlated surfaces with identifiers and confidences.

A correlation from cores alone is a hypothesis for a geologist to test against
seismic, biostratigraphy and well logs; it does not replace an interpretation.
"""

from faciesseq.correlation.align import (
    AlignmentOptions,
    PickColumn,
    align_columns,
    disputed_ties,
)
from faciesseq.correlation.chain import Correlation, correlate, correlate_interpretation
from faciesseq.correlation.wells import WellTable, read_wells, wells_from_frame

__all__ = [
    "AlignmentOptions",
    "Correlation",
    "PickColumn",
    "WellTable",
    "align_columns",
    "correlate",
    "correlate_interpretation",
    "disputed_ties",
    "read_wells",
    "wells_from_frame",
]
