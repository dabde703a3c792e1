"""Benchmark: catalogue build time, bulk insert vs one-by-one ORM insert, and query time.

Run: python tests/bench/bench_catalogue.py   (prints figures and ratios; not a pytest test)

Target: a fresh build (migrations + expansion + insert) under about 3 s.
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

TARGET_BUILD_S = 3.0


def _best(fn, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main() -> None:
    from sqlalchemy import insert
    from sqlalchemy.orm import Session

    from selector.catalogue import (
        build_catalogue,
        builtin_rows,
        find_parts,
        make_engine,
        migrate,
        open_catalogue,
        parts_frame,
    )
    from selector.catalogue.models import Part

    rows = builtin_rows()
    n = len(rows)
    t_expand = _best(builtin_rows)
    print(f"parts in the built-in catalogue: {n}")
    print(f"expand data files into rows:      {t_expand:.3f} s  ({n / t_expand:,.0f} parts/s)")

    with tempfile.TemporaryDirectory() as tmp:
        tmp_path = Path(tmp)

        counter = [0]

        def fresh_build() -> None:
            counter[0] += 1
            engine = open_catalogue(f"sqlite:///{tmp_path / f'fresh{counter[0]}.sqlite'}")
            engine.dispose()

        t_fresh = _best(fresh_build)
        print(
            f"fresh build (migrate+expand+insert): {t_fresh:.3f} s  ({n / t_fresh:,.0f} parts/s)"
            f"  target {TARGET_BUILD_S:.1f} s -> {t_fresh / TARGET_BUILD_S:.2f} of target"
        )
        url = f"sqlite:///{tmp_path / 'rebuild.sqlite'}"
        build_catalogue(url)
        t_rebuild = _best(lambda: build_catalogue(url))
        print(
            f"rebuild of built-in rows:         {t_rebuild:.3f} s  ({n / t_rebuild:,.0f} parts/s)"
        )
        t_reopen = _best(lambda: open_catalogue(url).dispose(), repeat=5)
        print(f"open an up-to-date catalogue:     {t_reopen * 1000:.1f} ms")

        # bulk executemany (what the build does) vs the ORM adding one object at a time
        def bulk() -> None:
            engine = make_engine(f"sqlite:///{tmp_path / 'bulk.sqlite'}")
            migrate(engine)
            with engine.begin() as conn:
                conn.execute(Part.__table__.delete())
                conn.execute(insert(Part.__table__), rows)
            engine.dispose()

        def one_by_one() -> None:
            engine = make_engine(f"sqlite:///{tmp_path / 'orm.sqlite'}")
            migrate(engine)
            with Session(engine) as session:
                session.query(Part).delete()
                for row in rows:
                    session.add(Part(**row))
                    session.flush()
                session.commit()
            engine.dispose()

        t_bulk = _best(bulk)
        t_orm = _best(one_by_one, repeat=1)
        print(
            f"insert {n} rows: bulk {t_bulk:.3f} s, ORM one-by-one {t_orm:.3f} s "
            f"-> bulk is {t_orm / t_bulk:.1f}x faster"
        )

        engine = open_catalogue(url)
        t_find = _best(lambda: find_parts(engine, "x2 330n 305"), repeat=10)
        t_fuzzy = _best(lambda: find_parts(engine, "metal film"), repeat=10)
        t_frame = _best(lambda: parts_frame(engine), repeat=5)
        engine.dispose()
        print(f"find 'x2 330n 305' (filtered):    {t_find * 1000:.1f} ms")
        print(f"find 'metal film' (fuzzy, all):   {t_fuzzy * 1000:.1f} ms")
        print(f"parts_frame (all rows):           {t_frame * 1000:.1f} ms")


if __name__ == "__main__":
    main()
