"""Shared database fixtures.

Every test session runs with DROPPER_DB, XDG_DATA_HOME and XDG_CACHE_HOME pointing into a
temporary folder, so no test ever creates or changes a catalogue or a cache of the user's own.

* ``catalogue_url``: a SQLite file holding the built-in catalogue, made once per session through
  the alembic migrations (``open_catalogue``). Treat it as read-only.
* ``catalogue_engine``: an engine on that file (read-only use), disposed after the test.
* ``catalogue_copy_url``: a private copy of the built catalogue, for tests that write.
* ``empty_db_url``: URL of a SQLite file that does not exist yet.
* ``migrated_engine``: an empty database migrated to head (no parts), disposed after the test.
* ``memory_engine``: an in-memory SQLite database migrated to head.
"""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest


@pytest.fixture(autouse=True, scope="session")
def _private_data_folder(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    patch = pytest.MonkeyPatch()
    base = tmp_path_factory.mktemp("dropper-data")
    patch.setenv("XDG_DATA_HOME", str(base))
    patch.setenv("XDG_CACHE_HOME", str(base / "cache"))
    patch.setenv("DROPPER_DB", str(base / "default-catalogue.sqlite"))
    yield base
    patch.undo()


@pytest.fixture(scope="session")
def catalogue_url(tmp_path_factory: pytest.TempPathFactory) -> str:
    from selector.catalogue import open_catalogue

    path = tmp_path_factory.mktemp("catalogue") / "catalogue.sqlite"
    url = f"sqlite:///{path}"
    open_catalogue(url).dispose()
    return url


@pytest.fixture(scope="session")
def builtin_frame(catalogue_url: str):
    """The built-in catalogue as the design solver reads it (``parts_frame``)."""
    from selector.catalogue import open_catalogue, parts_frame

    engine = open_catalogue(catalogue_url)
    try:
        yield parts_frame(engine)
    finally:
        engine.dispose()


@pytest.fixture
def catalogue_engine(catalogue_url: str):
    from selector.catalogue import make_engine

    engine = make_engine(catalogue_url)
    yield engine
    engine.dispose()


@pytest.fixture
def catalogue_copy_url(catalogue_url: str, tmp_path: Path) -> str:
    source = Path(catalogue_url.removeprefix("sqlite:///"))
    target = tmp_path / "catalogue-copy.sqlite"
    shutil.copyfile(source, target)
    return f"sqlite:///{target}"


@pytest.fixture
def empty_db_url(tmp_path: Path) -> str:
    return f"sqlite:///{tmp_path / 'empty.sqlite'}"


@pytest.fixture
def migrated_engine(empty_db_url: str):
    from selector.catalogue import make_engine, migrate

    engine = make_engine(empty_db_url)
    migrate(engine)
    yield engine
    engine.dispose()


@pytest.fixture
def memory_engine():
    from selector.catalogue import make_engine, migrate

    engine = make_engine("sqlite://")
    migrate(engine)
    yield engine
    engine.dispose()
