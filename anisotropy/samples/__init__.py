"""Reading and validating sample tables.

A sample table is a CSV file (comma, semicolon, tab or whitespace
separated; the separator is detected) or a Parquet file, with one row per
composite or blast hole: coordinates, a grade and, optionally, a domain and
a hole identifier. :func:`read_samples` turns it into a :class:`SampleSet`:
checked, cleaned, with every excluded or altered sample counted by reason,
and with the coordinates shifted to a local origin.

What happens to each row, in this order (a row left out is counted once,
under the first reason that applies):

1. Rows outside the selected domain are not read (they are not counted as
   dropped; ``n_read`` is the number of rows in the selected domain).
2. Cells that are neither numbers nor blank stop the run with a message
   naming the column, the first offending rows and their text.
3. A blank coordinate (empty cell or missing-value text such as ``NA``)
   leaves the row out: ``"blank coordinate"``.
4. A blank grade leaves the row out: ``"blank value"``; missing-value text
   (``NA``, ``N/A``, ``NaN``, ``null``, ``none``, ``#N/A``, ``-``, ``--``)
   likewise: ``"missing-value text (NA, N/A, ...)"``.
5. Grades ``<= -90`` (the usual -99, -999 codes) are missing-value codes:
   left out (``missing_codes="missing"``, the default) or kept as numbers
   (``"keep"``).
6. Other negative grades are below-detection codes ``-DL``: replaced by
   ``DL/2`` (``below_detection="half"``, the default, common practice),
   treated as missing (``"missing"``) or kept (``"keep"``).
7. Samples sharing a location (coordinates equal when rounded to the
   nearest millimetre, :data:`DUPLICATE_TOLERANCE`) are counted; policy
   ``"keep"`` (default) keeps them all, ``"average"`` keeps one sample per
   location with the mean grade, ``"drop"`` keeps the first sample (in table
   order) at each location.

Local origin: the minimum of each coordinate, rounded down to a whole metre,
is subtracted before any other arithmetic and kept in ``SampleSet.origin``.
For coordinates between the origin and twice the origin (any projected
easting or northing of a deposit) that subtraction is exact in float64
(Sterbenz lemma), so no precision is lost in the differences.

Planar data: when the root-mean-square distance of the samples from their
best-fitting plane (the smallest singular value of the centred coordinates
divided by sqrt(n)) is at most :data:`PLANAR_ABSOLUTE` metres or
:data:`PLANAR_RELATIVE` times the spread along the longest axis, the set is
flagged ``planar=True`` with a warning: the direction across that plane
cannot be studied.

Column names must differ: a table in which two columns share a name (after
stripping spaces) is refused, naming the positions of both columns; pandas
would otherwise rename the second (``Au.1``) and one of them would be used
without a word.

Two-dimensional tables: when no elevation column is given and no column is
named like one (``z``, ``elev``, ``rl``, ... or a near miss, which is
refused with the closest match instead), or with ``z="none"``
(``--z none``), the table is read as planar data at elevation 0 with a
warning saying so, and flagged ``planar=True``; ``columns["z"]`` is None.

Row numbers in messages are *data row numbers*: 1 for the first row under
the header line, so data row ``k`` is row ``k + 1`` in a spreadsheet that
shows the header on row 1.

The package's modules, each with one job:

- :mod:`~anisotropy.samples.reading` reads a table file (separator
  detection, Parquet, unique column names);
- :mod:`~anisotropy.samples.columns` finds the coordinate, value, domain
  and hole columns;
- :mod:`~anisotropy.samples.numbers` turns cells into numbers, naming every
  cell that is not one;
- :mod:`~anisotropy.samples.intake` applies the row rules above, in order;
- :mod:`~anisotropy.samples.record` is the result,
  :class:`~anisotropy.samples.record.SampleSet`;
- :mod:`~anisotropy.samples.conventions` holds the codes, tolerances,
  reasons and column words they share.
"""

from anisotropy.samples.columns import (detect_coordinate_columns, domain_codes, domain_values,
                                        find_column)
from anisotropy.samples.conventions import (DUPLICATE_TOLERANCE, MISSING_CODE_THRESHOLD,
                                            NO_ELEVATION, PLANAR_ABSOLUTE, PLANAR_RELATIVE)
from anisotropy.samples.intake import read_samples, samples_from_frame
from anisotropy.samples.reading import check_unique_columns, read_table
from anisotropy.samples.record import SampleSet

__all__ = [
    "SampleSet",
    "read_table",
    "samples_from_frame",
    "read_samples",
    "domain_values",
    "detect_coordinate_columns",
    "find_column",
    "domain_codes",
    "check_unique_columns",
    "MISSING_CODE_THRESHOLD",
    "DUPLICATE_TOLERANCE",
    "PLANAR_ABSOLUTE",
    "PLANAR_RELATIVE",
    "NO_ELEVATION",
]
