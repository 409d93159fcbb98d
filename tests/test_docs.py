"""The documentation: the README renders whole and stays short, its worked example is a valid
scenario whose quoted answers are the model's, the key reference lists every key of the range
table with its current range, links between the documents lead somewhere, and no file in the
repository names an absolute machine path or an issue by number."""
from __future__ import annotations

import importlib.util
import re
import subprocess
import tomllib

import pytest

from conftest import REPO
from thermo_budget.inputs.scenario import load_scenario
from thermo_budget.inputs.scenario_table import KEYS

README = REPO / "README.md"
README_MAX_LINES = 260
README_SECTIONS = ("Quick start", "Worked example", "The scenario file", "Commands", "Safety", "Limits",
                   "More")
DOCUMENTS = sorted([README, REPO / "DEVELOPERS.md", REPO / "CHANGELOG.md", *(REPO / "docs").glob("*.md")])

# Written in pieces so that this file does not name what it looks for.
MACHINE_PATH = re.compile(r"(?<![\w.~-])/(?:" + "|".join(["wo" + "rk", "ro" + "ot", "ho" + "me", "Us" + "ers", "m" + "nt"])
                          + r")/|\b[A-Za-z]:\\" + "Us" + r"ers\\")
ISSUE_NUMBER = re.compile(r"\bissue\s+#?\d+", re.IGNORECASE)
SKIPPED_DIRS = {".git", ".venv", "venv", "__pycache__", ".pytest_cache", ".hypothesis", "build", "dist",
                "node_modules"}


def keys_tool():
    """tools/keys_table.py, loaded from its file (it is a script outside the package)."""
    spec = importlib.util.spec_from_file_location("keys_table", REPO / "tools" / "keys_table.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def outside_code(text: str) -> list[tuple[int, str]]:
    """(line number, line) of the markdown lines outside fenced code blocks."""
    lines, fenced = [], False
    for number, line in enumerate(text.splitlines(), start=1):
        if line.lstrip().startswith(("```", "~~~")):
            fenced = not fenced
            continue
        if not fenced:
            lines.append((number, line))
    return lines


def cell_count(row: str) -> int:
    """Cells in a GitHub-flavoured markdown table row: split on unescaped pipes (a pipe inside a
    code span splits a cell too), without the outer pipes."""
    inner = row.strip()
    inner = inner[1:] if inner.startswith("|") else inner
    inner = inner[:-1] if inner.endswith("|") and not inner.endswith("\\|") else inner
    return len(re.split(r"(?<!\\)\|", inner))


DELIMITER = re.compile(r"^\|?\s*:?-{3,}:?\s*(\|\s*:?-{3,}:?\s*)*\|?$")


def table_problems(text: str) -> list[str]:
    """Every way a markdown text's tables would render broken: a row with another column count
    than its header, a line that is not a row inside a table (it would render as a row, or cut the
    table in two), and a row with no header and delimiter above it (it renders as plain text)."""
    problems, lines = [], outside_code(text)
    i = 0
    while i < len(lines):
        number, line = lines[i]
        nxt = lines[i + 1][1] if i + 1 < len(lines) else ""
        if line.lstrip().startswith("|") and DELIMITER.match(nxt.strip()):
            columns = cell_count(line)
            if cell_count(nxt) != columns:
                problems.append(f"line {number + 1}: the delimiter row has {cell_count(nxt)} cells, the header {columns}")
            i += 2
            while i < len(lines) and lines[i][1].strip():
                number, row = lines[i]
                if not row.lstrip().startswith("|"):
                    problems.append(f"line {number}: not a table row, inside a table: {row[:60]!r}")
                elif cell_count(row) != columns:
                    problems.append(f"line {number}: {cell_count(row)} cells, the header has {columns}: {row[:60]!r}")
                i += 1
            continue
        if line.lstrip().startswith("|") and line.count("|") >= 2:
            problems.append(f"line {number}: a table row with no header above it: {line[:60]!r}")
        i += 1
    return problems


def test_the_table_check_finds_the_breakages_it_is_for():
    header = "| key | meaning |\n|---|---|\n"
    assert table_problems(header + "| `a` | one |\n| `b` | two |\n") == []
    assert table_problems(header + "| `a` | one |\nA paragraph with no blank line.\n")          # inside a table
    assert table_problems(header + "| `a` | one |\n\nA paragraph.\n| `b` | stranded |\n")     # row after a paragraph
    assert table_problems(header + "| `a` | one | extra |\n")                                # too many cells
    assert table_problems(header + "| `--sensor bulk|return` | the unescaped pipe splits |\n")
    assert table_problems(header + "| `--sensor bulk\\|return` | escaped |\n") == []
    assert table_problems("```text\n| not | a table |\n```\n") == []


@pytest.mark.parametrize("path", DOCUMENTS, ids=lambda p: p.relative_to(REPO).as_posix())
def test_markdown_tables_render_whole(path):
    assert table_problems(path.read_text(encoding="utf-8")) == []


def test_readme_is_short_and_has_its_named_sections():
    text = README.read_text(encoding="utf-8")
    assert len(text.splitlines()) <= README_MAX_LINES
    headings = [line[3:].strip() for _, line in outside_code(text) if line.startswith("## ")]
    for section in README_SECTIONS:
        assert section in headings, f"README has no '## {section}' section"


def worked_example() -> tuple[dict, str]:
    """The README's worked example: its scenario (the TOML block) and the output it quotes."""
    section = README.read_text(encoding="utf-8").split("## Worked example", 1)[1].split("\n## ", 1)[0]
    scenario = section.split("```toml", 1)[1].split("```", 1)[0]
    output = section.split("```console", 1)[1].split("```", 1)[0]
    return tomllib.loads(scenario), output


def quoted(pattern: str, output: str) -> float:
    found = re.search(pattern, output)
    assert found, f"the README's example output no longer shows {pattern!r}"
    return float(found.group(1))


def test_readme_worked_example_quotes_the_models_answers():
    raw, output = worked_example()
    raw["uncertainty"] = {"enabled": False}     # the point answers only: the band does not move them
    from thermo_budget import report
    result = report(load_scenario(raw)).to_json()
    assert quoted(r"pulls under limit\s+(\d+) of", output) == result["pulls_under_limit"]
    assert quoted(r"of (\d+) planned", output) == result["pulls_planned"]
    assert quoted(r"peak ([\d.]+) °C", output) == pytest.approx(result["peak_C"], abs=0.05)
    assert quoted(r"minimum wait\s+(\d+) s", output) == pytest.approx(result["min_wait_s"], abs=0.5)
    assert quoted(r"cooler\s+needed: ([\d.]+) W/K", output) == pytest.approx(result["cooler_required_W_per_K"],
                                                                              abs=0.05)
    assert quoted(r"smallest oil volume ([\d.]+) L", output) == pytest.approx(result["min_oil_volume_L"], abs=0.005)


def test_key_reference_lists_every_key_with_its_current_range():
    doc = (REPO / "docs" / "keys.md").read_text(encoding="utf-8")
    tool = keys_tool()
    listed = tool.hand_written(doc)
    assert set(KEYS) <= set(listed), f"not in docs/keys.md: {sorted(set(KEYS) - set(listed))}"
    assert tool.rendered(doc) == doc, "docs/keys.md is out of date with KEYS: run python tools/keys_table.py"
    undescribed = [key for key in KEYS if listed[key][0] == tool.UNDESCRIBED]
    assert not undescribed, f"describe these keys in docs/keys.md: {undescribed}"


def test_key_reference_quotes_the_range_a_refusal_quotes():
    # the generated column is the reader's own range text: a US file's oil volume, for one
    tool = keys_tool()
    assert tool.range_cell("reservoir.oil_volume", "US") == KEYS["reservoir.oil_volume"].range_text("US")
    assert "gal" in tool.range_cell("reservoir.oil_volume", "US")
    assert tool.range_cell("session.repeat", "SI").endswith("a whole number")


LINK = re.compile(r"\]\(([^)\s]+)\)")


def anchors(text: str) -> set[str]:
    """The anchors GitHub gives a markdown text's headings: lower case, punctuation dropped,
    spaces as hyphens."""
    return {re.sub(r"[^\w\- ]", "", line.lstrip("#").strip().lower()).replace(" ", "-")
            for _, line in outside_code(text) if re.match(r"^#{1,6} ", line)}


def test_anchors_are_githubs():
    assert anchors("## The uncertainty band\n### What `run` answers\n") == {"the-uncertainty-band", "what-run-answers"}


@pytest.mark.parametrize("path", DOCUMENTS, ids=lambda p: p.relative_to(REPO).as_posix())
def test_links_between_documents_lead_somewhere(path):
    for _, line in outside_code(path.read_text(encoding="utf-8")):
        for target in LINK.findall(line):
            if re.match(r"^[a-z]+:", target):
                continue
            name, _, anchor = target.partition("#")
            file = (path.parent / name).resolve() if name else path
            assert file.exists(), f"{path.name} links to {target}, which does not exist"
            if anchor and file.suffix == ".md":
                assert anchor in anchors(file.read_text(encoding="utf-8")), f"{path.name} links to {target}: no such heading"


def repository_files() -> list:
    """The files of the repository: git's list where there is one, else a walk that skips
    virtual environments and caches."""
    try:
        listed = subprocess.run(["git", "ls-files", "-z"], cwd=REPO, capture_output=True, timeout=60, check=True)
        names = [name for name in listed.stdout.decode("utf-8").split("\0") if name]
        return [REPO / name for name in names if (REPO / name).is_file()]
    except (OSError, subprocess.SubprocessError):
        return [p for p in REPO.rglob("*") if p.is_file() and not SKIPPED_DIRS & set(p.relative_to(REPO).parts)]


def test_the_path_check_finds_machine_paths():
    home = "/" + "ho" + "me/someone/rig"
    assert MACHINE_PATH.search(f"see {home}/logs")
    assert MACHINE_PATH.search("C:\\" + "Us" + "ers\\someone")
    assert not MACHINE_PATH.search("scenarios/default.toml and docs/keys.md")
    assert not MACHINE_PATH.search("https://example.org/" + "ho" + "me/page")


def test_no_file_names_an_absolute_machine_path():
    found = []
    for path in repository_files():
        data = path.read_bytes()
        if b"\0" in data[:8192]:
            continue                     # a binary file (a picture, packed data)
        for number, line in enumerate(data.decode("utf-8", "replace").splitlines(), start=1):
            if MACHINE_PATH.search(line):
                found.append(f"{path.relative_to(REPO).as_posix()}:{number}: {line.strip()[:80]}")
    assert not found, "absolute machine paths:\n" + "\n".join(found)


def test_documents_name_requirements_not_issue_numbers():
    found = [f"{path.name}:{number}" for path in DOCUMENTS
             for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1)
             if ISSUE_NUMBER.search(line)]
    assert not found, f"an issue named by number (name the requirement itself): {found}"
