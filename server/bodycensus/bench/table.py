"""The one table ``bodycensus bench`` prints: each size's processes (seconds, peak MiB), the
ratios the issue's targets are stated in, the growth from the smallest size to the largest,
and the served dashboard's latency per kind of request and number of clients.

It renders the JSON-ready results dict (``--out FILE.json`` saves the same dict) and computes
nothing but ratios of figures in it.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

LABEL, CELL = 44, 22
WIDE = 32  # a latency cell: median / p95 (requests), errors
ROWS = (  # key in a size's "rows", how the table names it
    ("floor_stream", "floor A: scan_csv, cast, sink_parquet"),
    ("floor_eager", "floor B: read_csv, cast, write_parquet"),
    ("check", "check --format json --quiet"),
    ("pandas", "pandas reference of the rules"),
    ("check_out", "check ... --out DIR (the served run)"),
)
RATIOS = (  # name, numerator row, denominator row, figure, target
    ("check / floor A, time", "check", "floor_stream", "seconds", "target <= 3.0"),
    ("check / floor B, time", "check", "floor_eager", "seconds", ""),
    ("pandas / check, time", "pandas", "check", "seconds", "target >= 3.0"),
    ("check / pandas, peak memory", "check", "pandas", "peak_mib", "target <= 0.25"),
)

Results = Mapping[str, Any]


Figure = tuple[float, bool]  # a measured value, and whether it is only a lower bound


def _figure(row: Mapping[str, Any] | None, key: str) -> Figure | None:
    """A measured figure; a lower bound for a process the watchdog killed (it needed more time
    and memory than it had); None when the row did not run or failed otherwise."""
    if not row or "not_run" in row:
        return None
    if row["exit_code"] == 0:
        return float(row[key]), False
    if str(row.get("error", "")).startswith("killed:"):
        return float(row[key]), True
    return None


def _ratio(top: Figure | None, bottom: Figure | None) -> str:
    """top / bottom; '>' or '<' when one side is a lower bound, '-' when it cannot be said."""
    if top is None or bottom is None or not bottom[0] or (top[1] and bottom[1]) or \
            math.isnan(top[0] / bottom[0]):
        return "-"
    return (">" if top[1] else "<" if bottom[1] else "") + f"{top[0] / bottom[0]:.2f}"


def _cell(row: Mapping[str, Any] | None) -> str:
    """'seconds  MiB' of one process ('>' on both for one killed past the memory limit), or
    why there is none."""
    if row is None:
        return "-"
    if "not_run" in row:
        return "not run"
    figure = _figure(row, "seconds")
    if figure is None:
        return f"failed ({row['exit_code']})"
    mark = ">" if figure[1] else ""
    return f"{mark + format(row['seconds'], '.2f'):>9}{mark + format(row['peak_mib'], ',.0f'):>10}"


def _line(label: str, cells: list[str], last: str = "") -> str:
    return f"{label:<{LABEL}}" + "".join(f"{c:>{CELL}}" for c in cells) + \
        (f"   {last}" if last else "")


def process_lines(results: Results) -> list[str]:
    """The processes by size, their ratios and the growth from the first size to the last."""
    sizes = results["sizes"]
    growth = len(sizes) > 1
    last_head = f"{sizes[-1]['bodies'] / sizes[0]['bodies']:g}x bodies: s, MiB" if growth else ""
    lines = [_line("", [f"{s['bodies']:,} bodies" for s in sizes], last_head),
             _line("process", [f"{'seconds':>9}{'peak MiB':>10}" for _ in sizes])]
    notes = []
    for key, name in ROWS:
        rows = [s["rows"].get(key) for s in sizes]
        first, final = rows[0], rows[-1]
        ratios = [_ratio(_figure(final, key), _figure(first, key)) for key in ("seconds",
                                                                              "peak_mib")]
        last = ", ".join(ratios) if growth and ratios != ["-", "-"] else ""
        lines.append(_line(name, [_cell(r) for r in rows], last))
        notes += [f"  {name} at {s['bodies']:,}: {r.get('not_run') or r.get('error')}"
                  for s, r in zip(sizes, rows, strict=True)
                  if r and (r.get("not_run") or r.get("exit_code"))]
    lines.append("ratios")
    for name, top, bottom, key, target in RATIOS:
        cells = [_ratio(_figure(s["rows"].get(top), key), _figure(s["rows"].get(bottom), key))
                 for s in sizes]
        lines.append(_line(f"  {name}", cells, target))
    same = [s["same_findings"] for s in sizes]
    lines.append(_line("  findings, check vs pandas", [text.split(":")[0][:CELL - 1]
                                                          for text in same]))
    notes += [f"  findings at {s['bodies']:,}: {text}" for s, text in zip(sizes, same, strict=True)
              if text.startswith("DIFFERENT")]
    return lines + notes


def latency_lines(latency: Results) -> list[str]:
    """The latency table: the first request of each kind, then median / p95 (requests) per
    number of clients."""
    if "not_run" in latency:
        return [f"dashboard latency: not run ({latency['not_run']})"]
    clients = sorted({p["clients"] for p in latency["phases"]})
    lines = [f"dashboard latency on {latency['bodies']:,} bodies (bodycensus serve on 127.0.0.1, "
             f"{latency['seconds']:g} s per kind and number of clients), ms: "
             "median / p95 (requests)",
             f"{'request':<16}{'first':>8}" + "".join(
                 f"{f'{n} client' + ('s' if n > 1 else ''):>{WIDE}}" for n in clients)]
    for kind in latency["kinds"]:
        cells = []
        for n in clients:
            phase = next((p for p in latency["phases"] if p["kind"] == kind and
                          p["clients"] == n), None)
            if phase is None:
                cells.append("not run")
                continue
            text = f"{phase['median_ms']:.0f} / {phase['p95_ms']:.0f} ({phase['requests']})"
            if phase["errors"]:
                text += f" {phase['errors']} err"
            cells.append(text + (" KILLED" if phase.get("killed") else ""))
        first = latency["first_ms"].get(kind)
        lines.append(f"{kind:<16}{'' if first is None else f'{first:.0f}':>8}"
                     + "".join(f"{c:>{WIDE}}" for c in cells))
    lines.append(f"server peak memory {latency['server_peak_mib']:,.0f} MiB")
    lines += [f"KILLED: during {p['kind']} with {p['clients']} clients the server was "
              f"{p['killed']}; it was started again for the phases after it"
              for p in latency["phases"] if p.get("killed")]
    return lines


def render(results: Results) -> str:
    """The whole table as text."""
    head = results["head"]
    catalogues = "; ".join(f"{s['bodies']:,} bodies: {s['csv']} ({s['csv_mib']:,.0f} MiB)"
                           for s in results["sizes"])
    lines = [f"bodycensus bench, {head['when']}, {head['cores']} cores, load average "
             f"{head['load']:.1f} at the start; {head['versions']}",
             f"catalogues: {catalogues}", "",
             *process_lines(results), "", *latency_lines(results["latency"])]
    return "\n".join(lines) + "\n"
