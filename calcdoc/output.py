"""Everything calcdoc prints on the terminal goes through this module."""

from __future__ import annotations

import json
import sys
from collections.abc import Sequence
from typing import IO, Any

from calcdoc.format import eng, percent, value_text
from calcdoc.model.elements import KINDS


class Terminal:
    """Writes results and messages; ``ascii_only`` when the stream cannot take Ω or µ."""

    def __init__(self, out: IO[str] | None = None, err: IO[str] | None = None) -> None:
        self.out = out or sys.stdout
        self.err = err or sys.stderr
        enc = (getattr(self.out, "encoding", None) or "utf-8").lower()
        self.ascii_only = not enc.startswith("utf")

    # ------------------------------------------------------------ basics
    def line(self, text: str = "") -> None:
        if self.ascii_only:
            text = text.encode("ascii", "replace").decode("ascii")
        print(text, file=self.out)

    def error(self, message: str) -> None:
        print(f"calcdoc: error: {message}", file=self.err)

    def warning(self, message: str) -> None:
        print(f"calcdoc: warning: {message}", file=self.err)

    def progress(self, message: str) -> None:
        """A progress line on stderr (only when it is a terminal)."""
        if getattr(self.err, "isatty", lambda: False)():
            print(f"\r\033[K{message}", end="", file=self.err, flush=True)

    def progress_done(self) -> None:
        if getattr(self.err, "isatty", lambda: False)():
            print("\r\033[K", end="", file=self.err, flush=True)

    def json(self, obj: Any, *, compact: bool | None = None) -> None:
        """Print ``obj`` as JSON; large objects compact (the indenting encoder is slow)."""
        text = json.dumps(obj, ensure_ascii=False, allow_nan=False)
        if not compact and (compact is not None or len(text) < 200_000):
            text = json.dumps(obj, indent=1, ensure_ascii=False, allow_nan=False)
        self.out.write(text + "\n")

    def eng(self, value: float, unit: str, sig: int = 4) -> str:
        return eng(value, unit, sig, ascii_only=self.ascii_only)

    def table(self, headers: Sequence[str], rows: Sequence[Sequence[str]], align: str = "") -> None:
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
            for w in s.warnings:
                self.warning(w)
            self.line()
            rows = [
                (n, self.eng(v, "V", sig))
                for n, v in zip(net.nodes, br.node_voltage.tolist(), strict=True)
            ]
            self._rows(["node", "voltage"], rows, limit_rows)
            self.line()
            rows = [
                (
                    name,
                    net.types[j].replace("_", " "),
                    value_text(KINDS[net.types[j]].main.unit, float(net.values[j]), sig),
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
