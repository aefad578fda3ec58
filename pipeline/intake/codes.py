"""The intake's problem codes (``IN``). A code never changes meaning."""

from __future__ import annotations

from ..errors import register

IN001 = register("IN001", "file too large")
IN002 = register("IN002", "too many rows")
IN003 = register("IN003", "file is empty")
IN004 = register("IN004", "text encoding not recognised")
IN005 = register("IN005", "file type not supported")
IN006 = register("IN006", "file not found or unreadable")
IN007 = register("IN007", "rows do not form a table")
IN008 = register("IN008", "sheet not found")
IN009 = register("IN009", "no period column")
IN010 = register("IN010", "period cell not recognised")
IN011 = register("IN011", "value cell is not a number")
IN012 = register("IN012", "duplicate period in a series")
IN013 = register("IN013", "gap in the periods of a series")
IN014 = register("IN014", "mixed frequencies within a series")
IN015 = register("IN015", "index value not positive")
IN016 = register("IN016", "status cell not recognised")
IN017 = register("IN017", "duplicate column names")
IN018 = register("IN018", "no value columns")
IN019 = register("IN019", "SDMX-CSV file lacks a required column")
IN020 = register("IN020", "series name missing")
IN021 = register("IN021", "kind given for a series is not flow, stock or index")
IN022 = register("IN022", "kind given for a series the file does not contain")
IN023 = register("IN023", "vintage cell is not a date")
IN024 = register("IN024", "several units in one series")
IN025 = register("IN025", "columns ignored")
IN026 = register("IN026", "lines above the header skipped")
IN027 = register("IN027", "workbook cannot be opened")
IN028 = register("IN028", "blank column name")
