"""The project file's structure, declared once.

Every table of a project file is a tuple of :class:`Key`: the key's name,
the kind of value it holds, and a one-line description.  The loader
(:mod:`calcdoc.model.load`) takes its lists of allowed keys and its
enumerations from here; ``calcdoc schema`` (:mod:`calcdoc.model.schema`)
generates the JSON Schema from here.  The keys of an element come from the
element table (:mod:`calcdoc.model.elements`); :func:`element_table`
describes each of them.

>>> names("signoff")
('prepared', 'checked', 'approved', 'seal')
>>> key("analysis.samples").low, key("analysis.samples").high
(10, 1000000)
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache

from calcdoc.model.elements import COMMON_KEYS, RATING_KEYS, ElementType, element_keys
from calcdoc.model.quantities import KELVIN, NONE, VOLT, Dimension, dim_div

# ---------------------------------------------------------------- kinds of value
TEXT = "text"  # a string
TEXTS = "texts"  # an array of strings (one string is taken as a one-entry array)
DATE = "date"  # a TOML date
NAME = "name"  # a name of letters, digits, '_', '-' and '.'
NODES = "nodes"  # a pair of node names
VALUE = "value"  # a value string of `dimension`, or an expression over [parameters]
QUANTITY = "quantity"  # a constant value string of `dimension` (no parameters)
PAIR = "pair"  # [low, high]: two constant value strings of `dimension`
FRACTION = "fraction"  # a share above 0 and at most 1: a number or a string ("50 %")
TOLERANCE = "tolerance"  # a share ("1 %", 0.01) or a table of `keys` (minus, plus)
TEMPERATURE = "temperature"  # "70 °C", "343.15 K"
INTEGER = "integer"  # a whole number from `low` to `high`
CHOICE = "choice"  # one of `choices`
OUTPUTS = "outputs"  # an array of output names: a node, or ELEMENT.voltage/current/power
SETTING = "setting"  # a case setting: a value (as for the target) or a state
TABLE = "table"  # a table of the fixed `keys`
TABLES = "tables"  # an array of tables of the fixed `keys` ([[name]])
ENTRIES = "entries"  # a table of named entries, each one an `entry`
PARAMETER = "parameter"  # a value, or a table of `keys` (value, tolerance, description)
ELEMENT = "element"  # an element: its keys follow its type (:func:`element_table`)

#: A dimension left open: a value of any dimension (a parameter, a case setting,
#: a sweep's end points take the dimension of what they set).
ANY = None

# ---------------------------------------------------------------- enumerations
NAME_PATTERN = r"[A-Za-z0-9_.\-]+"
ROLES = ("prepared", "checked", "approved")
TOLERANCE_METHODS = ("none", "extreme", "montecarlo", "rss")
DISTRIBUTIONS = ("uniform", "normal")
SERIES = ("E3", "E6", "E12", "E24", "E48", "E96", "E192")
SCALES = ("linear", "log")
PAPERS = ("A4", "Letter")
PER_KELVIN = dim_div(NONE, KELVIN)


@dataclass(frozen=True)
class Key:
    """One key of a project-file table.

    Attributes
    ----------
    name : str
        The key as written in the file (``"*"`` for a named entry).
    kind : str
        What it holds: one of the kinds above (:data:`TEXT`, :data:`VALUE` ...).
    words : str
        One line saying what it means (the form is added from the kind).
    dimension : Dimension or None
        For values, quantities and pairs (None: any dimension).
    choices : tuple of str
        For :data:`CHOICE`.
    low, high : int or None
        For :data:`INTEGER`: the range, both ends included.
    keys : tuple of Key
        For tables, arrays of tables, tolerances and parameters: their keys.
    entry : Key or None
        For :data:`ENTRIES`: what each named entry holds.
    required : bool
        The key must be given.
    one_of : tuple of str
        For tables: at least one of these keys must be given.
    sign : str
        For values: ``"any"``, ``"positive"`` or ``"nonnegative"``.
    """

    name: str
    kind: str
    words: str
    dimension: Dimension | None = None
    choices: tuple[str, ...] = ()
    low: int | None = None
    high: int | None = None
    keys: tuple[Key, ...] = ()
    entry: Key | None = None
    required: bool = False
    one_of: tuple[str, ...] = ()
    sign: str = "any"


def names_of(keys: tuple[Key, ...]) -> tuple[str, ...]:
    return tuple(k.name for k in keys)


# ---------------------------------------------------------------- shared tables
TOLERANCE_KEYS = (
    Key("minus", QUANTITY, "tolerance below the value", NONE, required=True),
    Key("plus", QUANTITY, "tolerance above the value", NONE, required=True),
)
DERATING_KEYS = (
    Key("knee", TEMPERATURE, "full rating up to this temperature", required=True),
    Key("zero", TEMPERATURE, "no rating left at this temperature", required=True),
)
SIGNATURE_KEYS = (
    Key("name", TEXT, "who signed", required=True),
    Key("date", DATE, "when they signed"),
)
WINDOW_KEYS = (
    Key("min", QUANTITY, "lowest allowed voltage", VOLT),
    Key("max", QUANTITY, "highest allowed voltage", VOLT),
)

HISTORY_KEYS = (
    Key("revision", TEXT, "the revision", required=True),
    Key("date", DATE, "its date"),
    Key("description", TEXT, "what changed in it"),
)
ACROSS_KEYS = (
    Key("name", NAME, "the window's name (its check is across.NAME)", required=True),
    Key("nodes", NODES, "the two nodes [a, b]", required=True),
    *WINDOW_KEYS,
    Key("description", TEXT, "what the window guards"),
)

# ---------------------------------------------------------------- sections
DOCUMENT = (
    Key("title", TEXT, "title of the calculation, on the cover and every page"),
    Key("number", TEXT, "document number"),
    Key("revision", TEXT, 'revision of this issue, such as "B"'),
    Key("date", DATE, "date of this revision"),
    Key("project", TEXT, "the project the calculation belongs to"),
    Key("organisation", TEXT, "the organisation issuing the record"),
    Key("purpose", TEXT, "what the calculation shows"),
    Key("scope", TEXT, "what the calculation covers and leaves out"),
    Key("assumptions", TEXTS, "the assumptions made, one per entry"),
    Key("references", TEXTS, "standards and documents referred to, one per entry"),
    Key("history", TABLES, "one entry per issued revision, oldest first", keys=HISTORY_KEYS),
    Key("conclusion", TEXT, "closing words; left out, the package states the check results"),
)

SIGNOFF = (
    *(Key(role, TABLE, f"{role} by (left out: not signed)", keys=SIGNATURE_KEYS) for role in ROLES),
    Key("seal", TEXT, "image for the seal box: a file path, relative to the project file"),
)

CIRCUIT = (Key("reference", NAME, "the node every node voltage is measured from (default gnd)"),)

PARAMETER_KEYS = (
    Key("value", VALUE, "the parameter's value", ANY, required=True),
    Key("tolerance", TOLERANCE, "tolerance of the value", keys=TOLERANCE_KEYS),
    Key("description", TEXT, "what the parameter is"),
)

NODE_WINDOW = Key(
    "*", TABLE, "a window on the node's voltage", keys=WINDOW_KEYS, one_of=("min", "max")
)

#: The [limits] shares, one per policy a rating names (power_fraction ...).
LIMIT_FRACTIONS = tuple(dict.fromkeys(r.policy for r in RATING_KEYS.values()))


def _share(policy: str) -> Key:
    rated = " or ".join(r.words for r in RATING_KEYS.values() if r.policy == policy)
    return Key(policy, FRACTION, f"allowed share of each rated {rated}")


LIMITS = (
    *(_share(policy) for policy in LIMIT_FRACTIONS),
    Key("ambient", TEMPERATURE, "ambient temperature: power ratings are derated above the knee"),
    Key("derating", TABLE, "derating curve for every element without its own", keys=DERATING_KEYS),
    Key("nodes", ENTRIES, "windows on node voltages, by node name", entry=NODE_WINDOW),
    Key("across", TABLES, "windows on V(a) − V(b)", keys=ACROSS_KEYS, one_of=("min", "max")),
)

SETTING_ENTRY = Key("*", SETTING, "the element's or parameter's value (or state) in this case")
CASES = (
    Key("name", TEXT, "the case's name", required=True),
    Key("set", ENTRIES, "values and contact states in this case, by name", entry=SETTING_ENTRY),
    Key("description", TEXT, "what the case represents"),
)

ANALYSIS = (
    Key("tolerance", CHOICE, "how tolerances are combined", choices=TOLERANCE_METHODS),
    Key("samples", INTEGER, "montecarlo: number of random value sets", low=10, high=1_000_000),
    Key("seed", INTEGER, "montecarlo: seed of the random numbers", low=0, high=2**32 - 1),
    Key(
        "distribution",
        CHOICE,
        "montecarlo: how values spread (normal: tolerance = 3 sigma)",
        choices=DISTRIBUTIONS,
    ),
    Key("sensitivity", OUTPUTS, "outputs whose sensitivity to every value is reported"),
    Key("temperature", TEMPERATURE, "operating temperature: shifts values that have a tcr"),
    Key("reference_temperature", TEMPERATURE, "the temperature at which values are stated"),
)

SWEEPS = (
    Key("name", TEXT, "the sweep's title"),
    Key("target", NAME, "the element or parameter swept", required=True),
    Key("from", QUANTITY, "start of the range, in the target's dimension", ANY, required=True),
    Key("to", QUANTITY, "end of the range, in the target's dimension", ANY, required=True),
    Key("points", INTEGER, "number of points", low=2, high=2000),
    Key("scale", CHOICE, "spacing of the points", choices=SCALES),
    Key("outputs", OUTPUTS, "outputs plotted over the range", required=True),
)

REPORT = (
    Key("template", TEXT, 'a shipped style ("standard", "compact") or a style file path'),
    Key("paper", CHOICE, "paper size (overrides the style's)", choices=PAPERS),
    Key("significant_figures", INTEGER, "significant figures of printed values", low=2, high=10),
    Key("conclusion", TEXT, "closing words of the package"),
)

PARAMETER_ENTRY = Key("*", PARAMETER, "a value, or a table", keys=PARAMETER_KEYS)
ELEMENT_ENTRY = Key("*", ELEMENT, "an element; its type decides its keys")
PROJECT = (
    Key("schema", INTEGER, "version of the project-file format: 1", low=1, high=1),
    Key("document", TABLE, "what the record is: title, number, revision, dates", keys=DOCUMENT),
    Key("signoff", TABLE, "who prepared, checked and approved it", keys=SIGNOFF),
    Key("circuit", TABLE, "the circuit as a whole", keys=CIRCUIT),
    Key("parameters", ENTRIES, "named values for expressions and cases", entry=PARAMETER_ENTRY),
    Key("elements", ENTRIES, "the circuit's elements, by name", required=True, entry=ELEMENT_ENTRY),
    Key("limits", TABLE, "design policy: shares of ratings and voltage windows", keys=LIMITS),
    Key("cases", TABLES, "operating cases, each solved and checked in full", keys=CASES),
    Key("analysis", TABLE, "tolerance, sensitivity and temperature", keys=ANALYSIS),
    Key("sweeps", TABLES, "outputs plotted over a range of one value", keys=SWEEPS),
    Key("report", TABLE, "how the package is laid out", keys=REPORT),
)

_ROOT = Key("", TABLE, "a calcdoc project file", keys=PROJECT)


@cache
def key(path: str) -> Key:
    """The key at a dotted path; ``*`` (or any name) stands for a named entry.

    >>> key("limits.nodes.*.min").dimension == VOLT
    True
    """
    at = _ROOT
    for part in path.split(".") if path else ():
        if at.kind == ENTRIES and at.entry is not None:
            at = at.entry
            continue
        found = [k for k in at.keys if k.name == part]
        if not found:
            raise KeyError(path)
        at = found[0]
    return at


@cache
def section(path: str) -> tuple[Key, ...]:
    """The keys of the table at a path (``""``: the top level)."""
    return key(path).keys


@cache
def names(path: str) -> tuple[str, ...]:
    """The names of the keys of the table at a path."""
    return names_of(section(path))


def span(path: str) -> tuple[int, int]:
    """The range ``(low, high)`` of the whole number at a path, both ends included."""
    k = key(path)
    if k.low is None or k.high is None:
        raise KeyError(path)
    return k.low, k.high


# ---------------------------------------------------------------- elements
#: The common keys of every element other than type, nodes and rating (built per type).
_COMMON = {
    "tolerance": Key("tolerance", TOLERANCE, "tolerance of its value", keys=TOLERANCE_KEYS),
    "description": Key("description", TEXT, "what it is"),
    "source": Key("source", TEXT, "where its value and rating come from"),
    "basis": Key("basis", TEXT, "how they were chosen"),
    "series": Key(
        "series", CHOICE, "preferred-value series its value should belong to", choices=SERIES
    ),
    "tcr": Key("tcr", QUANTITY, "temperature coefficient of its value", PER_KELVIN),
    "derating": Key("derating", TABLE, "its own derating curve", keys=DERATING_KEYS),
}


def element_table(kind: ElementType) -> tuple[Key, ...]:
    """Every key an element of this type takes, described: ``type``, ``nodes``,
    the type's own keys, then the keys every element may carry.

    Two common keys are left out where the loader refuses every value of
    them: ``tolerance`` for a type without a value, ``series`` for a type
    whose value is not a resistance.
    """
    taken = element_keys(kind)
    own = [n for n in taken if n not in COMMON_KEYS]
    rest = [n for n in COMMON_KEYS if n in taken and n not in ("type", "nodes")]
    described = (_element_key(kind, name) for name in ("type", "nodes", *own, *rest))
    return tuple(k for k in described if k is not None)


def _element_key(kind: ElementType, name: str) -> Key | None:
    numbers = {k.name: k for k in kind.keys}
    windows = {w.name: w for w in kind.windows}
    if name in numbers:
        k = numbers[name]
        return Key(name, VALUE, k.words or name, k.dimension, required=k.required, sign=k.sign)
    if name in windows:
        w = windows[name]
        return Key(name, PAIR, f"{w.words}: the {w.quantity} stays inside [low, high]", w.dimension)
    if name == "type":
        return Key(name, CHOICE, kind.words, choices=(kind.type,), required=True)
    if name == "nodes":
        return Key(name, NODES, "its terminals [" + ", ".join(kind.terminals) + "]", required=True)
    if name == "control" and kind.control == "nodes":
        return Key(name, NODES, "the controlling node pair [c+, c−]", required=True)
    if name == "control":
        return Key(name, NAME, "the element whose current controls it", required=True)
    if name == "state":
        words = f"its state ({kind.settable[0]} if left out); a case may set it"
        return Key(name, CHOICE, words, choices=kind.settable)
    if name == "symbol":
        return Key(name, CHOICE, "how it is drawn", choices=kind.drawings)
    if name == "rating":
        rated = tuple(
            Key(r, QUANTITY, f"rated {RATING_KEYS[r].words}", RATING_KEYS[r].dimension)
            for r in kind.ratings
        )
        return Key(name, TABLE, "its ratings", keys=rated)
    if name == "tolerance" and not kind.has_value:
        return None
    if name == "series" and kind.main.unit != "Ω":
        return None
    return _COMMON[name]
