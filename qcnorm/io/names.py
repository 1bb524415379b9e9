"""Header vocabulary: units in column names ("Ra [µm]") and the names that mark id, characteristic,
value and unit columns."""

from __future__ import annotations

import re

# Header names (normalized: casefold, only letters/digits kept) that mark a column as
# not a measurement in a wide file.
_NOT_MEASUREMENT_NAMES = {
    "id", "no", "nr", "num", "number", "index", "idx", "row", "rowno", "sample", "sampleno",
    "samplenr", "sampleid", "samplenumber", "part", "partno", "partnr", "partid", "partnumber",
    "piece", "pieceno", "serial", "serialno", "serialnumber", "sn", "batch", "batchno", "lot",
    "lotno", "lotnumber", "subgroup", "subgroupno", "group", "shift", "operator", "machine",
    "cavity", "station", "spindle", "nest", "fixture", "line", "date", "time", "datetime",
    "timestamp", "day", "week", "month", "year", "hour", "order", "seq", "sequence", "run",
    "runno", "position", "pos", "item", "itemno", "measurementno", "counter", "count",
}


_CHARACTERISTIC_NAMES = {
    "characteristic", "characteristics", "feature", "parameter", "param", "name", "char",
    "characteristicname", "featurename", "parametername", "test", "testname", "attribute",
    "property", "measurand", "variable", "analyte", "dimension", "quantity",
}


_VALUE_NAMES = {
    "value", "values", "result", "results", "measurement", "measured", "measuredvalue",
    "reading", "meas", "actual", "actualvalue", "measurementvalue", "resultvalue", "val",
}


_UNIT_COLUMN_NAMES = {"unit", "units", "uom", "unitofmeasure", "einheit"}


_UNIT_TOKENS = {
    "mm", "µm", "μm", "um", "nm", "cm", "m", "in", "inch", "mil", "mils", "thou", "g", "mg",
    "kg", "n", "kn", "nm", "mpa", "kpa", "pa", "gpa", "bar", "psi", "°c", "°f", "degc", "degf",
    "c", "f", "k", "s", "ms", "min", "h", "%", "ppm", "v", "mv", "a", "ma", "ω", "ohm",
    "hrc", "hrb", "hv", "hb", "deg", "°", "rpm", "hz", "khz", "l", "ml", "g/cm3", "g/cm³",
    "n·m", "lb", "lbf", "oz", "µin", "uin", "ppb", "mg/l", "mg/kg", "cp", "mpa·s",
}


_UNIT_BRACKETS = re.compile(r"^(?P<name>.*?)\s*[\[(]\s*(?P<unit>[^\[\]()]{1,20}?)\s*[\])]\s*$")


_UNIT_SLASH = re.compile(r"^(?P<name>.*?\S)\s*/\s*(?P<unit>[^\s/]{1,12})$")


_UNIT_IN = re.compile(r"^(?P<name>.*?\S)\s+in\s+(?P<unit>\S{1,12})$", re.IGNORECASE)


def _split_units(header: str) -> tuple[str, str | None]:
    """Split "Ra [µm]", "Diameter (mm)", "Flatness/um", "Length in mm" into name, units."""
    h = str(header).strip()
    m = _UNIT_BRACKETS.match(h)
    if m and m.group("name"):
        unit = m.group("unit").strip()
        square = h.endswith("]")
        if square or _looks_like_unit(unit):
            return m.group("name").strip(), unit
    for rx in (_UNIT_SLASH, _UNIT_IN):
        m = rx.match(h)
        if m and m.group("unit").casefold() in _UNIT_TOKENS:
            return m.group("name").strip(), m.group("unit")
    return h, None


def _looks_like_unit(text: str) -> bool:
    """"mm", "kN", "mg/kg", "N·m", "°C": a known unit, or short without spaces and not a word.

    "(left)" or "(nominal)" are qualifiers, not units.
    """
    t = text.strip()
    if t.casefold() in _UNIT_TOKENS:
        return True
    return 0 < len(t) <= 8 and " " not in t and (len(t) <= 3 or not t.isalpha())


def split_units(header: str) -> tuple[str, str | None]:
    """Split a header such as "Ra [µm]" or "Diameter (mm)" into ("Ra", "µm")."""
    return _split_units(header)


def _column_key(name: str) -> str:
    """Case/space-insensitive key of a column name with its units removed."""
    return re.sub(r"[\s_]+", "", _split_units(name)[0].casefold())


def _is_unit_token(text: str) -> bool:
    t = text.strip()
    if len(t) >= 2 and t[0] in "[(" and t[-1] in "])":
        return True
    return t.casefold() in _UNIT_TOKENS
