"""Benchmark: `dropper audit` on a 10,000-line BOM of many boards (demo data, invented).

How boards are told apart: a ``Board`` column (the BOM reader maps it to the field ``board``);
designators need only be unique within one board. Each board has its own role map: every board
carries a load-side resistor under a different designator (R7..R9), named ``other`` in a roles
file with one ``[boards."NAME".roles]`` table per board, as a team concatenating board BOMs would
write it.

Boards cycle through ``--distinct`` designs (X capacitor, Zener, series resistor; up to 459), so
identical circuits recur; the audit analyses each distinct circuit once (and says how many it
analysed). Run both ends:

    python tests/bench/bench_audit.py                    # 1000 boards, 12 designs
    python tests/bench/bench_audit.py --distinct 459     # 1000 boards, 459 designs

Prints lines, boards, distinct circuits, wall time (total and per line; the first audit, with the
engine and catalogue imports already done), the time of reading the BOM alone, and the peak
memory that tracemalloc saw during a second, identical audit.
"""

from __future__ import annotations

import argparse
import csv
import tempfile
import time
import tracemalloc
from pathlib import Path


def _designs(n: int) -> list[tuple[str, tuple[str, str], str]]:
    """Up to 459 different designs: 17 X capacitors x 3 Zeners x 9 series resistors (E24)."""
    caps = ["220n", "150n", "330n", "100n", "110n", "120n", "130n", "160n", "180n", "200n"]
    caps += ["240n", "270n", "300n", "360n", "390n", "430n", "470n"]
    zeners = [("12V", "1W"), ("5V1", "1W"), ("15V", "3W")]
    series = ["47R", "68R", "51R", "56R", "62R", "75R", "82R", "91R", "100R"]
    out = [(c, z, r) for r in series for c in caps for z in zeners]
    # interleave so that the first n differ in every part
    out.sort(key=lambda d: (caps.index(d[0]) + zeners.index(d[1]) + series.index(d[2])) % 7)
    if n > len(out):
        raise SystemExit(f"--distinct at most {len(out)}")
    return out[:n]


def write_bom(path: Path, roles_path: Path, lines: int, distinct: int) -> int:
    designs = _designs(distinct)
    rows = []
    roles = ["# roles per board (demo, invented)"]
    board = 0
    while len(rows) < lines:
        board += 1
        name = f"vent-{board:05d}"
        cap, (vz, pz), rs = designs[board % len(designs)]
        led = f"R{7 + board % 3}"
        zpkg = "D_SMB" if pz == "3W" else "D_SMA"
        part = [
            ("F1", "1", "T100mA", "Fuse, time-lag, 250VAC, I2t 0.5A2s", "Fuse_Holder_PCB"),
            ("R1, R2", "2", rs, "Resistor, metal oxide, 1W, 350V, 5%", "R_Axial_DIN0414"),
            ("C1", "1", cap, "Capacitor X2, metallized polypropylene, 305VAC, 10%", "C_Rect"),
            ("R3-R5", "3", "470k", "Resistor, thick film, 1/4W, 200V, 1%", "R_1206_3216Metric"),
            ("BR1", "1", "bridge", "Bridge rectifier 600V 0.5A IFSM 30A", "MBS"),
            ("D1", "1", vz, f"Zener diode {vz} {pz} 5%", zpkg),
            ("C2", "1", "470u", "Electrolytic capacitor 25V 105°C", "CP_Radial_D8.0mm"),
            ("C3", "1", "100n", "Ceramic capacitor 50V X7R", "C_0603_1608Metric"),
            (led, "1", "1k", "Resistor, thick film, 1/10W", "R_0603_1608Metric"),
            ("U1", "1", "MCU", "Microcontroller", "SOIC-8"),
        ]
        for ref, qty, value, desc, fp in part:
            rows.append((name, ref, qty, value, desc, fp))
        roles.append(f'[boards."{name}".roles]\n{led} = "other"')
    rows = rows[:lines]
    with path.open("w", encoding="utf-8", newline="") as f:
        w = csv.writer(f)
        w.writerow(["Board", "Designator", "Quantity", "Value", "Description", "Footprint"])
        w.writerows(rows)
    last = rows[-1][0]
    kept = [r for r in roles if not r.startswith("[boards.") or r.split('"')[1] <= last]
    roles_path.write_text("\n".join(kept) + "\n", encoding="utf-8")
    return len({r[0] for r in rows})


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lines", type=int, default=10_000)
    ap.add_argument("--distinct", type=int, default=12)
    args = ap.parse_args()

    from selector.audit.bom import read_bom
    from selector.audit.evaluate import audit_bom
    from selector.catalogue import open_catalogue, parts_frame, resolve_url
    from selector.engine import Conditions, Mains, Tolerances

    with tempfile.TemporaryDirectory() as tmp:
        bom = Path(tmp) / "boards.csv"
        roles = Path(tmp) / "roles.toml"
        # cut the last board short would break it: keep whole boards (10 lines each)
        n_lines = args.lines - args.lines % 10
        boards = write_bom(bom, roles, n_lines, args.distinct)
        frame = parts_frame(open_catalogue(resolve_url(None)))

        t0 = time.perf_counter()
        table = read_bom(bom)
        t_read = time.perf_counter() - t0

        kwargs = dict(
            mains=Mains(230.0, 0.10, (50.0, 60.0)),
            conditions=Conditions(),
            tolerances=Tolerances(),
            roles_file=roles,
            catalogue=frame,
        )
        t0 = time.perf_counter()
        result = audit_bom(bom, **kwargs)
        elapsed = time.perf_counter() - t0

        # a second run under tracemalloc for the peak (tracemalloc slows Python down, so the
        # time above is taken without it)
        tracemalloc.start()
        audit_bom(bom, **kwargs)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()

    circuits = {b.circuit for b in result.boards}
    print(f"lines                {len(table.parts)} parts on {n_lines} BOM lines")
    print(f"boards               {boards}")
    print(f"distinct circuits    {len(circuits)} (each analysed once)")
    print(f"findings             {len(result.findings)}  summary {result.summary}")
    print(f"read BOM only        {t_read:.3f} s")
    print(f"whole audit          {elapsed:.2f} s  ({elapsed / n_lines * 1e3:.3f} ms per line)")
    print(f"peak memory          {peak / 1e6:.1f} MB (tracemalloc, audit only)")


if __name__ == "__main__":
    main()
