"""Everything calcdoc prints on the terminal goes through this module.

Text from a project file or a received package (titles, case names,
descriptions, certificate names, messages quoting them) could carry
terminal control sequences that move the cursor or recolour the screen,
so every line is passed through :func:`terminal_safe` on its way out.
"""

from __future__ import annotations

import json
import re
import sys
from collections.abc import Sequence
from typing import IO, Any

from calcdoc.format import eng, percent, value_text
from calcdoc.model.elements import KINDS

# Characters a terminal may act on instead of showing: C0 and C1 controls
# (ESC, CR, backspace, the single-byte CSI), bidirectional embeddings,
# overrides and isolates and the other invisible format characters
# (Unicode category Cf), line and paragraph separators (Zl, Zp) and
# surrogates (Cs).  Generated from unicodedata 14.0; the test suite checks
# it against the running Python's own Unicode tables.
_BEYOND_C0 = (
    "\\x7f-\\x9f\\xad\\u0600-\\u0605\\u061c\\u06dd\\u070f\\u0890-\\u0891\\u08e2"
    "\\u180e\\u200b-\\u200f\\u2028-\\u202e\\u2060-\\u2064\\u2066-\\u206f\\ud800-\\udfff\\ufeff"
    "\\ufff9-\\ufffb\\U000110bd\\U000110cd\\U00013430-\\U0001343f\\U0001bca0-\\U0001bca3"
    "\\U0001d173-\\U0001d17a\\U000e0001\\U000e0020-\\U000e007f"
)
UNSAFE = re.compile(f"[\\x00-\\x1f{_BEYOND_C0}]")
# json.dumps already escapes C0 inside strings; outside them its newlines are layout.
_JSON_UNSAFE = re.compile(f"[{_BEYOND_C0}]")


_SHORT = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def _escape(match: re.Match[str]) -> str:
    char = match.group()
    if char in _SHORT:
        return _SHORT[char]
    code = ord(char)
    if code <= 0xFF:
        return f"\\x{code:02x}"
    return f"\\u{code:04x}" if code <= 0xFFFF else f"\\U{code:08x}"


def _json_escape(match: re.Match[str]) -> str:
    code = ord(match.group())
    if code <= 0xFFFF:
        return f"\\u{code:04x}"
    code -= 0x10000  # JSON writes other planes as a surrogate pair
    return f"\\u{0xD800 + (code >> 10):04x}\\u{0xDC00 + (code & 0x3FF):04x}"


def terminal_safe(text: str) -> str:
    r"""``text`` with every control or invisible format character shown as an escape.

    >>> terminal_safe("R1\x1b[2J\rRESULT: PASS\u202e")
    'R1\\x1b[2J\\rRESULT: PASS\\u202e'
    """
    return UNSAFE.sub(_escape, text)


def json_safe(text: str) -> str:
    r"""JSON text with the characters of :data:`UNSAFE` written as ``\uXXXX`` escapes.

    The JSON value is unchanged (the escapes mean the same characters);
    only the terminal no longer sees them raw.
    """
    if text.isascii() and "\x7f" not in text:
        return text  # an encoder escapes every other ASCII control character already
    return _JSON_UNSAFE.sub(_json_escape, text)


class Terminal:
    """Writes results and messages; ``ascii_only`` when the stream cannot take Ω or µ."""

    def __init__(self, out: IO[str] | None = None, err: IO[str] | None = None) -> None:
        self.out = out or sys.stdout
        self.err = err or sys.stderr
        enc = (getattr(self.out, "encoding", None) or "utf-8").lower()
        self.ascii_only = not enc.startswith("utf")

    # ------------------------------------------------------------ basics
    def line(self, text: str = "") -> None:
        """One line on standard output; a newline inside ``text`` is shown as ``\\n``."""
        text = terminal_safe(text)
        if self.ascii_only:
            text = text.encode("ascii", "replace").decode("ascii")
        print(text, file=self.out)

    def _err_line(self, text: str) -> None:
        text = terminal_safe(text)
        enc = (getattr(self.err, "encoding", None) or "utf-8").lower()
        if not enc.startswith("utf"):
            text = text.encode("ascii", "replace").decode("ascii")
        print(text, file=self.err)

    def error(self, message: str, *more: str) -> None:
        """``calcdoc: error: MESSAGE``, then each of ``more`` on its own line."""
        self._err_line(f"calcdoc: error: {message}")
        for text in more:
            self._err_line(text)

    def warning(self, message: str) -> None:
        self._err_line(f"calcdoc: warning: {message}")

    def project_warnings(self, project) -> None:
        """The loader's warnings about a project (names differing only in case)."""
        for text in getattr(project, "warnings", ()):
            self.warning(f"{project.path}: {text}")

    def progress(self, message: str) -> None:
        """A progress line on stderr (only when it is a terminal)."""
        if getattr(self.err, "isatty", lambda: False)():
            print(f"\r\033[K{terminal_safe(message)}", end="", file=self.err, flush=True)

    def progress_done(self) -> None:
        if getattr(self.err, "isatty", lambda: False)():
            print("\r\033[K", end="", file=self.err, flush=True)

    def json(self, obj: Any, *, compact: bool | None = None) -> None:
        """Print ``obj`` as JSON; large objects compact (the indenting encoder is slow).

        orjson encodes large results about ten times faster than the standard
        library; the values are the same either way.
        """
        try:
            import orjson

            text = orjson.dumps(obj).decode("utf-8")
        except ImportError:  # pragma: no cover - orjson is a dependency
            text = json.dumps(obj, ensure_ascii=False, allow_nan=False)
        if not compact and (compact is not None or len(text) < 200_000):
            text = json.dumps(obj, indent=1, ensure_ascii=False, allow_nan=False)
        self.out.write(json_safe(text) + "\n")

    def eng(self, value: float, unit: str, sig: int = 4) -> str:
        return eng(value, unit, sig, ascii_only=self.ascii_only)

    def table(self, headers: Sequence[str], rows: Sequence[Sequence[str]], align: str = "") -> None:
        headers = [terminal_safe(h) for h in headers]
        rows = [[terminal_safe(c) for c in row] for row in rows]
        widths = [len(h) for h in headers]
        for row in rows:
            widths = [max(w, len(c)) for w, c in zip(widths, row, strict=True)]
        align = align or "l" + "r" * (len(headers) - 1)

        def fmt(row: Sequence[str]) -> str:
            cells = [
                c.ljust(w) if a == "l" else c.rjust(w)
                for c, w, a in zip(row, widths, align, strict=True)
            ]
            return "  ".join(cells).rstrip()

        self.line(fmt(headers))
        self.line("  ".join("-" * w for w in widths))
        for row in rows:
            self.line(fmt(row))

    # ------------------------------------------------------------ results
    def case_results(self, results, *, limit_rows: int = 200) -> None:
        p = results.project
        sig = p.report.significant_figures
        for r in results.cases:
            net, br = r.netlist, r.branches
            title = f"Case: {r.name}"
            self.line(title)
            self.line("=" * len(title))
            s = r.solution
            if s.exact is not None:
                self.line(f"{len(s.unknowns)} unknowns, {s.method} (no rounding)")
            else:
                self.line(
                    f"{len(s.unknowns)} unknowns, {s.method}; relative residual {s.residual:.1e}, "
                    f"condition {s.condition:.3g}, estimated error {s.error_estimate:.1e}"
                )
            if r.states is not None:
                st = r.states
                tight = min(
                    ((d.element, t) for d in st.devices for t in d.tests),
                    key=lambda x: x[1].margin,
                    default=None,
                )
                held = "every device's test holds" if st.holds else "a device's test FAILS"
                line = (
                    f"States: {st.method}, {st.iterations} pivots over {st.pieces} pieces; {held}"
                )
                if tight is not None:
                    unit = "A" if tight[1].quantity == "current" else "V"
                    line += (
                        f" (smallest margin {tight[0]} {tight[1].text} by "
                        f"{self.eng(tight[1].margin, unit, 3)})"
                    )
                self.line(line)
            for w in s.warnings:
                self.warning(w)
            self.line()
            rows = [
                (n, self.eng(v, "V", sig))
                for n, v in zip(net.nodes, br.node_voltage.tolist(), strict=True)
            ]
            self._rows(["node", "voltage"], rows, limit_rows)
            self.line()
            absent = set(net.absent)
            rows = [
                (
                    name,
                    net.types[j].replace("_", " ") + (f" ({net.state(j)})" if net.state(j) else ""),
                    "—"
                    if (j, KINDS[net.types[j]].main.name) in absent
                    else value_text(KINDS[net.types[j]].main.unit, float(net.values[j]), sig),
                    self.eng(br.voltage[j], "V", sig),
                    self.eng(br.current[j], "A", sig),
                    self.eng(br.power[j], "W", sig),
                )
                for j, name in enumerate(net.names)
            ]
            self._rows(
                ["element", "type", "value", "voltage", "current", "power"], rows, limit_rows
            )
            self.line()
            kcl = float(abs(r.kcl).max()) if len(r.kcl) else 0.0
            self.line(
                f"KCL: largest residual {self.eng(kcl, 'A')} over {len(net.nodes) - 1} nodes; "
                f"KVL: largest loop sum {self.eng(r.kvl.max_abs_sum, 'V')} over {r.kvl.count} loops"
            )
            led = r.ledger
            self.line(
                f"Power: absorbed {self.eng(led.absorbed, 'W', sig)}, delivered "
                f"{self.eng(led.delivered, 'W', sig)}, imbalance {self.eng(led.imbalance, 'W')}"
            )
            if r.checks:
                self.line()
                self.checks_table(r.checks, sig)
            self.line()
        for note in results.notes:
            self.line(note)

    def _rows(self, headers, rows, limit_rows: int) -> None:
        if len(rows) > limit_rows:
            self.table(headers, rows[:limit_rows])
            self.line(f"... {len(rows) - limit_rows} more rows (use --json for all)")
        else:
            self.table(headers, rows)

    def checks_table(self, checks, sig: int = 4) -> None:
        from calcdoc.format import UNITS

        rows = []
        for c in checks:
            unit = UNITS[c.quantity]
            rel = "≤" if c.bound == "max" else "≥"
            rows.append(
                (
                    c.id,
                    self.eng(c.value, unit, sig),
                    f"{rel} {self.eng(c.limit, unit, sig)}",
                    percent(c.utilization),
                    self.eng(c.margin, unit, sig),
                    "PASS" if c.passed else "FAIL",
                )
            )
        self.table(["check", "value", "limit", "utilisation", "margin", "status"], rows)

    def check_summary(self, results, summary=None) -> None:
        """The check set's counts (:mod:`calcdoc.checkset`), its failures and its worst row."""
        from calcdoc.checkset import TOLERANCE, check_summary
        from calcdoc.format import UNITS, counted

        s = summary or check_summary(results)
        p = results.project
        self.line(f"{p.document.title} ({p.path})")
        solved = s.count - s.at_tolerance
        where = f"{counted(solved, 'check')} in {counted(s.cases, 'case')} as solved"
        if s.at_tolerance:
            where += f", {s.at_tolerance} at the tolerance worst case"
        self.line(
            f"{counted(s.count, 'check')} ({where}): {s.count - len(s.failed)} pass, "
            f"{len(s.failed)} fail"
        )

        def place(row) -> str:
            return row.case + (
                f", tolerance worst case ({row.method})" if row.scope == TOLERANCE else ""
            )

        for row in s.failed:
            c = row.check
            unit = UNITS[c.quantity]
            rel = "≤" if c.bound == "max" else "≥"
            self.line(
                f"  FAIL  [{place(row)}] {c.id}: {self.eng(c.value, unit)} against {rel} "
                f"{self.eng(c.limit, unit)} ({percent(c.utilization)})"
            )
        if s.worst:
            self.line(
                f"Worst utilisation: {percent(s.worst.utilization)} at {s.worst.check.id} "
                f"[{place(s.worst)}]"
            )
        for note in results.notes:
            if not note.startswith("Tolerance ("):  # the check set above already counts these
                self.line(note)
        self.line("RESULT: " + ("FAIL" if s.failed else "PASS"))
