"""The README's tour is what `make demo` prints (common practice: documentation that runs).

`make demo` runs `activolt demo --out demo_output`; the tour shows its output under
`$ make demo`, indented by four spaces. A change of the report that is not carried into the
README fails here.
"""

from __future__ import annotations

from pathlib import Path

from activolt.cli import main

README = Path(__file__).resolve().parents[1] / "README.md"


def _tour() -> list[str]:
    lines = README.read_text(encoding="utf-8").splitlines()
    start = lines.index("    $ make demo") + 1
    block = []
    for line in lines[start:]:
        if line and not line.startswith("    "):
            break
        block.append(line[4:])
    while block and not block[-1]:
        block.pop()
    return block


def test_readme_tour_is_the_demo_output(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["demo", "--out", "demo_output"]) == 0
    printed = capsys.readouterr().out.splitlines()
    while printed and not printed[-1]:
        printed.pop()
    assert printed == _tour()
