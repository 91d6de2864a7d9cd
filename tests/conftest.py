import pytest
from click.testing import CliRunner


@pytest.fixture
def runner() -> CliRunner:
    return CliRunner()


# ----- every DXF the suite reads is kept and read again by both readers at the end (test_dxf_readers.py)
import hashlib  # noqa: E402
import os  # noqa: E402
import shutil  # noqa: E402
import tempfile  # noqa: E402
from pathlib import Path  # noqa: E402

import pathlen.importers.dxf as dxf_module  # noqa: E402

#: per test session (its process id), in the temporary folder: concurrent sessions never share it
DXF_RECORD = Path(tempfile.gettempdir()) / f"pathlen-dxf-seen-{os.getpid()}"


@pytest.fixture(autouse=True, scope="session")
def record_dxf_files():
    """Wrap the DXF entry point so that each file read (in this process or a forked worker) is copied
    to :data:`DXF_RECORD` (a temporary folder of this session) under its content hash."""
    shutil.rmtree(DXF_RECORD, ignore_errors=True)
    DXF_RECORD.mkdir()
    original = dxf_module.read_dxf

    def recording(path, *args, **kwargs):
        try:
            data = Path(path).read_bytes()
            (DXF_RECORD / (hashlib.sha1(data).hexdigest() + ".dxf")).write_bytes(data)
        except OSError:
            pass
        return original(path, *args, **kwargs)

    dxf_module.read_dxf = recording
    yield
    dxf_module.read_dxf = original
    shutil.rmtree(DXF_RECORD, ignore_errors=True)


def pytest_collection_modifyitems(config, items):
    """The side-by-side check of recorded files runs after every other test has read its DXF; the check that
    no process is left behind runs last of all."""
    last = [i for i in items if i.name == "test_every_dxf_the_suite_read"]
    final = [i for i in items if i.name == "test_no_process_is_left_behind"]  # after everything else
    items[:] = [i for i in items if i not in last and i not in final] + last + final
