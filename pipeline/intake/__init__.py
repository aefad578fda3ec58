"""Intake as a straight line of stages: bytes -> table -> layout -> periods -> values and
statuses -> series, with the reading note built as it goes.

The public entry point is :mod:`pipeline.ingest` (``read_file``, ``read_table``,
``preview``, ``list_sheets``, ``Intake``, ``Table``); it calls these stages in order:

============  ===============================================================================
module        stage
============  ===============================================================================
source        the bytes: size limit, file or upload, format (text, xlsx, xls, ods)
text          text files: decoding (and a warning when the decoded text looks garbled),
              delimiter and quoting, cells as text
workbook      workbooks: unpacked-size and ratio checks, sheet choice (cover sheets
              skipped), cells
table         the table in the cells: title rows above the header, footnotes below it,
              the marker legend, blank rows and columns, column names
layout        which columns are what: wide, long, SDMX-CSV or periods across the header;
              year + quarter (or month) columns combined; the cells as one long table
periods       period cells to periods (:mod:`pipeline.labels`), dates finer than months
values        value cells to numbers, status markers (``312.5p``), missing markers,
              status and vintage columns
kinds         flow, stock or index: told, said by the unit, given by the file's position,
              or guessed
series        one :class:`~pipeline.model.Series` per series: duplicates, mixed
              frequencies, gaps and missing values
problems      the bounded problem list (first N problems, counts per code), cells
              echoed short
note          the reading note: what intake did, in words
codes         the IN problem codes
============  ===============================================================================
"""
