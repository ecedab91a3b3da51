"""The start-up table of dataclass methods (rulecheck.record_methods): a class made through
it has the very code ``dataclasses`` compiles without it; the table is written back only
when it grew, read back whole, ignored when torn, foreign or not a table, and bounded; the
command line fills it on its first run and gives the same bytes with it, without it and
with a corrupt one."""

from __future__ import annotations

import builtins
import dataclasses
import marshal
import os
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import SAMPLES

from rulecheck import record_methods
from rulecheck.record_methods import MethodTable

RECORD = '''
from dataclasses import dataclass, field

@dataclass(frozen=True)
class Probe:
    """A record like ours: defaults, a factory, an optional."""

    name: str
    size: float
    tags: tuple[str, ...] = ()
    notes: frozenset[str] = field(default_factory=frozenset)
    limit: float | None = None
'''

METHODS = ("__init__", "__repr__", "__eq__", "__hash__", "__setattr__", "__delattr__")


class _Recorder:
    """An ``exec`` for :mod:`dataclasses` that notes each source text it is given."""

    def __init__(self) -> None:
        self.texts: list[str] = []

    def exec(self, source: str, globals: object = None, locals: object = None, /) -> None:  # noqa: A002
        self.texts.append(source)
        builtins.exec(source, globals, locals)  # type: ignore[arg-type]


@pytest.fixture
def texts(monkeypatch: pytest.MonkeyPatch) -> int:
    """How many source texts plain ``dataclasses`` compiles for ``Probe``: one per method
    up to Python 3.12, one for all of them from 3.13."""
    recorder = _Recorder()
    _define(recorder, monkeypatch)
    return len(recorder.texts)


def _define(table: MethodTable | _Recorder | None, monkeypatch: pytest.MonkeyPatch) -> type:
    """``Probe`` defined afresh, through ``table`` (or plain ``dataclasses`` when None)."""
    with monkeypatch.context() as patch:
        if table is None:
            patch.delattr(dataclasses, "exec", raising=False)
        else:
            patch.setattr(dataclasses, "exec", table.exec, raising=False)
        namespace: dict[str, object] = {}
        exec(RECORD, namespace)  # noqa: S102 - the test's own class text
    return namespace["Probe"]  # type: ignore[return-value]


def test_methods_have_the_code_dataclasses_compiles(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, texts: int
) -> None:
    plain = _define(None, monkeypatch)
    table = MethodTable(tmp_path / "t.marshal")
    first = _define(table, monkeypatch)  # compiled by the table, kept
    assert table.grew and len(table.codes) == texts
    again = _define(MethodTable(tmp_path / "t.marshal"), monkeypatch)  # empty: not saved
    assert table.save()
    read_back = MethodTable(tmp_path / "t.marshal")
    from_file = _define(read_back, monkeypatch)
    assert not read_back.grew  # every text found in the file
    for name in METHODS:
        reference = getattr(plain, name).__code__
        for cls in (first, again, from_file):
            # code objects compare bytecode, constants, names, line table, flags
            assert getattr(cls, name).__code__ == reference, name
    # and the classes behave alike
    a, b = plain("p", 1.0, ("x",)), from_file("p", 1.0, ("x",))
    assert repr(a) == repr(b) and hash(a) == hash(b)
    assert b == from_file("p", 1.0, ("x",)) and b != from_file("p", 2.0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        b.size = 3.0  # type: ignore[misc]


def test_saved_only_when_it_grew(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "t.marshal"
    table = MethodTable(path)
    assert not table.save() and not path.exists()  # nothing compiled: nothing written
    _define(table, monkeypatch)
    assert table.save() and path.exists()
    stamp = path.stat().st_mtime_ns
    again = MethodTable(path)
    _define(again, monkeypatch)
    assert not again.save() and path.stat().st_mtime_ns == stamp


@pytest.mark.parametrize(
    "content",
    [b"", b"not marshal at all", marshal.dumps([1, 2, 3]), marshal.dumps({"a": 1})],
    ids=["empty", "garbage", "a list", "not code"],
)
def test_unusable_file_is_ignored_and_written_again(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, content: bytes, texts: int
) -> None:
    path = tmp_path / "t.marshal"
    path.write_bytes(content)
    table = MethodTable(path)
    assert table.codes == {}
    _define(table, monkeypatch)
    assert table.save()
    assert len(MethodTable(path).codes) == texts


def test_torn_file_is_ignored(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "t.marshal"
    table = MethodTable(path)
    _define(table, monkeypatch)
    table.save()
    path.write_bytes(path.read_bytes()[:-40])
    assert MethodTable(path).codes == {}


@pytest.mark.skipif(not hasattr(os, "getuid") or os.getuid() != 0, reason="needs chown")
def test_file_of_another_user_is_not_read(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "t.marshal"
    table = MethodTable(path)
    _define(table, monkeypatch)
    table.save()
    os.chown(path, 54321, -1)
    assert MethodTable(path).codes == {}


def test_past_the_limit_only_this_runs_texts_are_kept(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, texts: int
) -> None:
    path = tmp_path / "t.marshal"
    stale = {f"# stale {n}\n": compile("", "<string>", "exec") for n in range(5)}
    path.write_bytes(marshal.dumps(stale))
    monkeypatch.setattr(record_methods, "LIMIT", texts + 2)  # under the 5 stale + texts
    table = MethodTable(path)
    _define(table, monkeypatch)
    assert len(table.codes) == 5 + texts
    table.save()
    kept = MethodTable(path).codes
    assert len(kept) == texts and not any(t.startswith("# stale") for t in kept)


def test_install_once(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.delattr(dataclasses, "exec", raising=False)
    monkeypatch.setattr(record_methods, "table_path", lambda: tmp_path / "t.marshal")
    registered: list[object] = []
    monkeypatch.setattr(record_methods.atexit, "register", registered.append)
    table = record_methods.install()
    assert record_methods.install() is table  # a second call changes nothing
    assert dataclasses.exec == table.exec  # type: ignore[attr-defined]
    assert registered == [table.save]


def test_table_is_named_by_the_interpreter(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("RULECHECK_CACHE_DIR", str(tmp_path))
    path = record_methods.table_path()
    assert path.parent == tmp_path
    version = "-".join(map(str, sys.version_info[:3]))
    assert f"{sys.implementation.name}-{version}-O{sys.flags.optimize}" in path.name


def test_command_line_fills_the_table_and_gives_the_same_bytes(tmp_path: Path) -> None:
    env = dict(os.environ, RULECHECK_CACHE_DIR=str(tmp_path / "cache"))
    command = [sys.executable, "-m", "rulecheck", "check", str(SAMPLES / "two-bath-house.yaml")]

    def run() -> bytes:
        done = subprocess.run(command, env=env, capture_output=True, check=False)
        assert done.returncode in (0, 1), done.stderr
        assert not done.stderr
        return done.stdout

    first = run()
    (table,) = (tmp_path / "cache").glob("record-methods-*.marshal")
    codes = marshal.loads(table.read_bytes())
    assert len(codes) > 30  # at least one text per record class of a check (some 40)
    assert run() == first
    table.write_bytes(b"\x00torn")
    assert run() == first
    assert len(marshal.loads(table.read_bytes())) == len(codes)  # written whole again
