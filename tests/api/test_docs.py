"""The documents say what the code does, and their commands run.

- api/README.md's settings table is the one :func:`api.settings.settings_markdown` makes
  from ``api.settings.SETTINGS`` (``python -m tests.api.test_docs`` rewrites it), and every
  ``OHMTALLY_*`` variable the code reads is documented.
- Every place in the repository that cites a section of api/README.md (``api/README.md,
  "Readings into a job": "…"``) names a heading it has, and a sentence it quotes is in it.
- README.md is at most 400 lines, says the safety caution once with everything the caution
  must say, and its offline commands and pipeline script run with the exit statuses it
  states. Its commands against a server run in tests/api/test_cli_server.py, which imports
  :func:`shell_blocks` from here.

Sources: the caution's content is the project's rule for every page (engine.NOTICE says the
same); the exit statuses are the command line's contract (api/README.md, "The command line").
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from api.settings import SETTINGS, settings_markdown

ROOT = Path(__file__).resolve().parents[2]
API_README = ROOT / "api" / "README.md"
README = ROOT / "README.md"
_START, _END = "<!-- generated:settings -->\n", "<!-- /generated:settings -->"


def shell_blocks(path: Path) -> list[str]:
    """The ```sh fenced blocks of a Markdown file, in order."""
    return re.findall(r"^```sh\n(.*?)^```", path.read_text(encoding="utf-8"), re.S | re.M)


def _settings_section(text: str) -> str:
    start = text.index(_START) + len(_START)
    return text[start:text.index(_END, start)]


def rewrite_settings_table() -> None:
    """Put the generated settings table into api/README.md between its markers."""
    text = API_README.read_text(encoding="utf-8")
    start = text.index(_START) + len(_START)
    API_README.write_text(text[:start] + settings_markdown() + text[text.index(_END, start):],
                          encoding="utf-8")


def test_the_settings_table_is_the_code_s() -> None:
    """api/README.md's settings table equals the one generated from SETTINGS (run
    `python -m tests.api.test_docs` to rewrite it)."""
    assert _settings_section(API_README.read_text(encoding="utf-8")) == settings_markdown()


def test_the_generated_table_has_a_row_per_setting() -> None:
    """One row per setting with its variable and default; a '|' in a meaning cannot split a row."""
    rows = settings_markdown().splitlines()[2:]
    assert len(rows) == len(SETTINGS)
    for row, setting in zip(rows, SETTINGS, strict=True):
        cells = re.split(r"(?<!\\)\|", row)[1:-1]
        assert len(cells) == 3, row
        assert cells[0].strip() == f"`OHMTALLY_{setting.name}`"
        assert cells[1].strip() == (f"`{setting.default}`" if setting.default else "*(empty)*")


def test_every_variable_the_code_reads_is_documented() -> None:
    """Each OHMTALLY_* name in engine, adapters and api appears in api/README.md or DEVELOPERS.md."""
    documented = API_README.read_text(encoding="utf-8") + (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    names: set[str] = set()
    for package in ("engine", "adapters", "api"):
        for path in (ROOT / package).rglob("*.py"):
            names.update(re.findall(r"OHMTALLY_[A-Z0-9_]*[A-Z0-9]", path.read_text(encoding="utf-8")))
    assert names, "the scan found no setting at all"
    assert sorted(n for n in names if n not in documented) == []


_CITATION = re.compile(r'api/README\.md(?:,|\s\()\s*"([^"]+)"\)?(?::\s*"([^"]+)")?')


def _plain(text: str) -> str:
    """Text as read: emphasis and code marks dropped, whitespace folded."""
    return " ".join(text.replace("`", "").replace("*", "").split())


def _sections(text: str) -> dict[str, str]:
    """Heading → its text, its subsections included (up to the next heading of its level or higher)."""
    headings = [(m.start(), len(m.group(1)), m.group(2).strip())
                for m in re.finditer(r"^(#{1,6}) (.+)$", text, flags=re.M)]
    found: dict[str, str] = {}
    for index, (start, level, title) in enumerate(headings):
        end = next((s for s, lv, _t in headings[index + 1:] if lv <= level), len(text))
        found[title] = text[start:end]
    return found


def test_citations_of_api_readme_name_its_sections() -> None:
    """Every tracked file citing a section of api/README.md names a heading it has, and the
    sentence it quotes is in that section."""
    listed = subprocess.run(["git", "ls-files"], cwd=ROOT, capture_output=True, text=True, check=False)
    if listed.returncode != 0:
        pytest.skip(f"not a git checkout: {listed.stderr.strip()}")
    sections = _sections(API_README.read_text(encoding="utf-8"))
    wrong, seen = [], 0
    for name in listed.stdout.splitlines():
        path = ROOT / name
        if path.suffix not in {".py", ".md", ".yaml", ".yml", ".toml", ".sh"} or not path.is_file():
            continue
        for match in _CITATION.finditer(path.read_text(encoding="utf-8", errors="replace")):
            seen += 1
            title, quoted = match.group(1), match.group(2)
            if title not in sections:
                wrong.append(f"{name}: no section {title!r}")
            elif quoted and _plain(quoted) not in _plain(sections[title]):
                wrong.append(f"{name}: section {title!r} does not say {quoted!r}")
    assert seen >= 5, "the citation pattern found too few citations to be checking anything"
    assert wrong == []


def test_the_readme_is_short_and_cautions_once() -> None:
    """README.md: at most 400 lines; one caution section, saying: a decision aid on recorded readings,
    testing by competent persons with safe isolation, the signer decides, local codes and licensed
    practice prevail."""
    text = README.read_text(encoding="utf-8")
    assert len(text.splitlines()) <= 400
    cautions = [title for title in _sections(text) if "caution" in title.lower()]
    assert cautions == ["Safety caution"]
    caution = _plain(_sections(text)["Safety caution"]).lower()
    for said in ("decision aid on recorded readings", "competent persons", "safe isolation",
                 "person who signs the certificate or report decides",
                 "local codes and licensed practice prevail"):
        assert said in caution, said


def _tool_env() -> dict[str, str]:
    """The checkout's ohmtally first on PATH, as after `make demo`."""
    return {**os.environ, "PATH": f"{Path(sys.executable).parent}{os.pathsep}{os.environ.get('PATH', '')}"}


def _workdir(tmp_path: Path) -> Path:
    """A scratch folder that sees the checkout's examples/, so outputs land there, not in the checkout."""
    (tmp_path / "examples").symlink_to(ROOT / "examples")
    return tmp_path


def test_the_readme_offline_commands_exit_as_it_says(tmp_path: Path) -> None:
    """Each `ohmtally verify` line of README.md whose comment states an exit status exits with it."""
    commands = [line for block in shell_blocks(README) for line in block.splitlines()
                if line.startswith("ohmtally verify") and re.search(r"# .*exit \d", line)]
    assert len(commands) >= 4
    where = _workdir(tmp_path)
    for line in commands:
        stated = re.search(r"exit (\d)", line.split("#", 1)[1])
        assert stated is not None, line
        expected = int(stated.group(1))
        done = subprocess.run(["bash", "-c", line], cwd=where, env=_tool_env(), capture_output=True,
                              text=True, timeout=120)
        assert done.returncode == expected, f"{line}\n{done.stderr[-1000:]}"


def test_the_readme_pipeline_script_gates(tmp_path: Path) -> None:
    """README.md's pipeline script, run on the demo site, exits 1 (circuits fail) and leaves a JUnit
    report with failures; on a site that passes, exit 0."""
    (script,) = [block for block in shell_blocks(README) if block.startswith("#!/bin/sh")]
    where = _workdir(tmp_path)
    (where / "gate.sh").write_text(script, encoding="utf-8")
    done = subprocess.run(["sh", "gate.sh", "examples/demo-site.json"], cwd=where, env=_tool_env(),
                          capture_output=True, text=True, timeout=120)
    assert done.returncode == 1, done.stderr[-1000:]
    assert "a circuit fails" in done.stdout
    report = ET.parse(where / "ohmtally-junit.xml").getroot()
    assert sum(int(suite.get("failures", "0")) for suite in report.iter("testsuite")) > 0
    # one circuit whose readings show every limit met (BS 7671 Table 41.3: B20 maximum Zs 2.19 ohm)
    (where / "one.json").write_text(
        '{"installation": {"earthing": "TN-C-S", "ze_ohm": 0.31}, "circuits": [{"board": "DB1", '
        '"circuit": "1", "device": "B20", "cable": "2.5/1.5", "cable_type": "twin_and_earth", '
        '"reference_method": "C", "length_m": 18, "r1_r2_ohm": 0.31, "zs_ohm": 0.62, "ir_test_v": 500, '
        '"ir_ll_mohm": ">999", "ir_le_mohm": ">999", "polarity_ok": true}]}', encoding="utf-8")
    passing = subprocess.run(["sh", "gate.sh", "one.json"], cwd=where, env=_tool_env(),
                             capture_output=True, text=True, timeout=120)
    assert passing.returncode == 0, passing.stdout + passing.stderr[-1000:]


if __name__ == "__main__":
    rewrite_settings_table()
