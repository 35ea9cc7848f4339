"""`partcheck catalog ...` through typer's runner and through a real subprocess: exit codes and messages."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from typer.main import get_command
from typer.testing import CliRunner

from partcheck.catalog.migrations import CURRENT_VERSION
from partcheck.cli import app

from .conftest import SMALL

runner = CliRunner()
REPO = Path(__file__).resolve().parents[2]


def cli(*args: str, db: Path | str | None = None):
    argv = ["catalog", *args] + (["--db", str(db)] if db is not None else [])
    return runner.invoke(app, argv, env={"COLUMNS": "200"})


def test_every_catalog_command_has_help():
    group = get_command(app).commands["catalog"]
    assert group.help  # typer ships its own click: check by behaviour, not by class
    assert set(group.commands) == {"init", "add", "import", "export", "list", "show", "find", "remove", "copy"}
    for name, command in group.commands.items():
        assert command.help and len(command.help) > 20, name
        for param in command.params:
            if param.param_type_name == "option" and param.name != "help":
                assert param.help, f"{name} {param.opts}"
            if param.param_type_name == "argument":
                assert getattr(param, "help", None), f"{name} {param.name}"
            if param.name == "db":
                assert param.envvar == "PARTCHECK_DB"
        result = runner.invoke(app, ["catalog", name, "--help"])
        assert result.exit_code == 0 and "Usage" in result.output


def test_init_add_show_list_find_remove(tmp_path):
    db = tmp_path / "c.sqlite"
    result = cli("init", db=db)
    assert result.exit_code == 0
    assert result.stdout == f"catalog ready at {db} (schema version {CURRENT_VERSION}, 0 parts)\n"
    result = cli("add", "SW-X1", "--category", "switch", "--subtype", "mosfet", "--description", "demo switch",
                 "--set", "vds_max=100V", "--set", "rds_on=30m", db=db)
    assert result.exit_code == 0 and result.stdout == f"added SW-X1 (switch) to {db}\n"
    result = cli("show", "SW-X1", db=db)
    assert result.exit_code == 0
    assert "100 V" in result.stdout and "30 mΩ" in result.stdout and "drain-source voltage rating" in result.stdout
    result = cli("show", "SW-X1", "--format", "json", db=db)
    shown = json.loads(result.stdout)
    assert (shown["vds_max"], shown["rds_on"], shown["id_max"]) == (100.0, 0.03, None)
    result = cli("list", db=db)
    assert result.exit_code == 0 and "SW-X1" in result.stdout and result.stdout.endswith("1 part\n")
    result = cli("find", "demo", "--format", "json", db=db)
    assert json.loads(result.stdout)[0]["part"]["part_number"] == "SW-X1"
    result = cli("remove", "SW-X1", db=db)
    assert result.exit_code == 0 and result.stdout == f"removed SW-X1 from {db}\n"
    result = cli("remove", "SW-X1", db=db)
    assert result.exit_code == 2
    assert result.stderr == "error: part 'SW-X1' is not in the catalog; add it with `partcheck catalog add`\n"


def test_docs_and_data_with_brackets_are_shown_verbatim(tmp_path):
    db = tmp_path / "c.sqlite"
    cli("add", "D-1", "--category", "diode", "--description", "[bold]fast[/bold] [s] rectifier", "--set", "trr=35ns",
        db=db)
    shown = cli("show", "D-1", db=db).stdout
    assert "reverse recovery time [s]" in shown  # "[s]" is not rich's strike-through markup here
    assert "[bold]fast[/bold] [s] rectifier" in shown
    assert "[bold]fast[/bold] [s] rectifier" in cli("list", db=db).stdout
    assert "[bold]fast[/bold]" in cli("find", "rectifier", db=db).stdout


def test_import_list_filters_and_export(tmp_path):
    db = tmp_path / "c.sqlite"
    result = cli("import", str(SMALL), db=db)
    assert result.exit_code == 0
    assert result.stdout == (f"imported {SMALL}: 12 parts added, 0 updated, 8 curve points from "
                             f"{SMALL.with_name('small.curves.csv')} into {db}\n")
    listed = json.loads(cli("list", "--category", "capacitor", "--min", "v_rated=30V", "--format", "json",
                            db=db).stdout)
    assert [p["part_number"] for p in listed] == ["TST-C-470U-35V"]
    table = cli("list", "--subtype", "schottky", db=db)
    assert "TST-D-100V-3A" in table.stdout and "790 mV" in table.stdout and "TST-D-600V-1A" not in table.stdout
    result = cli("export", str(tmp_path / "out.json"), db=db)
    assert result.stdout == f"exported 12 parts to {tmp_path / 'out.json'}\n"
    result = cli("export", "-", db=db)
    assert result.exit_code == 0 and result.stdout.startswith("part_number,category,subtype,")
    assert result.stderr.startswith("warning: 8 curve points were not written: CSV on standard output")


def test_bad_input_exit_codes_and_messages(tmp_path):
    db = tmp_path / "c.sqlite"
    cli("import", str(SMALL), db=db)
    bad = tmp_path / "bad.csv"
    bad.write_text("part_number,category,v_rated\nC-1,capacitor,22uF\n", encoding="utf-8")
    result = cli("import", str(bad), db=db)
    assert result.exit_code == 2
    assert result.stderr == (f"error: {bad}, line 2, column 'v_rated': '22uF' is not a voltage (V) "
                             "(the unit says a capacitance (F)); nothing was imported\n")
    result = cli("list", "--format", "yaml", db=db)
    assert result.exit_code == 2 and "'yaml' is not one of table, json" in result.output
    result = cli("list", "--min", "v_rated", db=db)
    assert result.exit_code == 2 and "'v_rated' is not COLUMN=VALUE" in result.output
    result = cli("list", db=tmp_path / "absent.sqlite")
    assert result.exit_code == 2
    assert result.stderr == (f"error: there is no catalog at {tmp_path / 'absent.sqlite'}; "
                             "create it with `partcheck catalog init`\n")
    assert not (tmp_path / "absent.sqlite").exists()


def test_database_failure_is_exit_code_1(tmp_path, monkeypatch):
    db = tmp_path / "c.sqlite"
    cli("import", str(SMALL), db=db)
    from partcheck.catalog import store

    def broken(self, *a, **k):
        raise store._failure(f"{self.location}: database error: disk I/O error")

    monkeypatch.setattr(store.Catalog, "parts", broken)
    result = cli("list", db=db)
    assert result.exit_code == 1 and result.stderr == f"error: {db}: database error: disk I/O error\n"


def _run(*args: str, env_db: Path) -> subprocess.CompletedProcess:
    env = {**os.environ, "PARTCHECK_DB": str(env_db), "COLUMNS": "200"}
    return subprocess.run([sys.executable, "-m", "partcheck", "catalog", *args], capture_output=True, text=True, check=False,
                          env=env, cwd=REPO, timeout=60)


def test_subprocess_failed_import_leaves_the_file_byte_identical(tmp_path):
    db = tmp_path / "team.sqlite"
    done = _run("import", str(SMALL), env_db=db)  # the catalog comes from PARTCHECK_DB
    assert done.returncode == 0, done.stderr
    assert done.stdout.startswith(f"imported {SMALL}: 12 parts added")
    before = db.read_bytes()
    assert not Path(f"{db}-wal").exists()  # closed cleanly: everything is in the main file

    bad = tmp_path / "bad.csv"
    bad.write_text("part_number,category,subtype,vds_mx\nSW-9,switch,mosfet,100 V\n", encoding="utf-8")
    done = _run("import", str(bad), env_db=db)
    assert done.returncode == 2 and done.stdout == ""
    assert done.stderr.startswith(f"error: {bad}, line 1, column 'vds_mx': unknown column 'vds_mx'; "
                                  "did you mean 'vds_max'? valid columns are: part_number, category,")
    assert "Traceback" not in done.stderr
    assert db.read_bytes() == before

    dup = tmp_path / "dup.csv"
    dup.write_text("part_number,category\nTST-Z-150V,clamp\n", encoding="utf-8")
    done = _run("import", str(dup), env_db=db)
    assert done.returncode == 2
    assert done.stderr == (f"error: {dup}, line 2, column 'part_number': part number 'TST-Z-150V' is already in "
                           "the catalog; import with --update to replace it; nothing was imported\n")
    assert db.read_bytes() == before


def test_subprocess_export_round_trip_and_newer_schema(tmp_path):
    db = tmp_path / "team.sqlite"
    assert _run("import", str(SMALL), env_db=db).returncode == 0
    first = _run("export", "-", "--format", "json", env_db=db)
    assert first.returncode == 0 and first.stderr == ""
    (tmp_path / "x.json").write_text(first.stdout, encoding="utf-8")
    other = tmp_path / "other.sqlite"
    assert _run("import", str(tmp_path / "x.json"), env_db=other).returncode == 0
    assert _run("export", "-", "--format", "json", env_db=other).stdout == first.stdout

    import sqlite3

    con = sqlite3.connect(other)
    con.execute(f"update catalog_meta set value='{CURRENT_VERSION + 1}' where key='schema_version'")
    con.commit()
    con.close()
    done = _run("list", env_db=other)
    assert done.returncode == 2
    assert done.stderr == (f"error: {other} has catalog schema version {CURRENT_VERSION + 1}, newer than version "
                           f"{CURRENT_VERSION} that partcheck 0.1.0 understands; "
                           "upgrade partcheck to use this catalog\n")


def test_subprocess_failed_imports_change_nothing_on_each_backend(tmp_path, catalog_url):
    # The equivalent of the byte-identical file above for any backend: the canonical export of the
    # catalog before and after each failed import is the same, byte for byte.
    def run(*args: str) -> subprocess.CompletedProcess:
        env = {**os.environ, "PARTCHECK_DB": catalog_url, "COLUMNS": "200"}
        return subprocess.run([sys.executable, "-m", "partcheck", "catalog", *args], capture_output=True, text=True,
                              check=False, env=env, cwd=REPO, timeout=60)

    assert run("import", str(SMALL)).returncode == 0
    before = run("export", "-", "--format", "json")
    assert before.returncode == 0 and before.stdout.count('"part_number"') == 12
    bad = tmp_path / "bad.csv"
    bad.write_text("part_number,category,v_rated\nC-NEW,capacitor,25 V\nC-BAD,capacitor,22uF\n", encoding="utf-8")
    dup = tmp_path / "dup.csv"
    dup.write_text("part_number,category\nNEW-2,clamp\nTST-Z-150V,clamp\n", encoding="utf-8")
    for path in (bad, dup):
        done = run("import", str(path))
        assert done.returncode == 2 and done.stderr.startswith(f"error: {path}, line ")
        assert "Traceback" not in done.stderr
        assert run("export", "-", "--format", "json").stdout == before.stdout
