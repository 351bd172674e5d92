"""Repository invariants: README set-up commands, CI script, cautions."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _readme_commands() -> list[str]:
    lines = (ROOT / "README.md").read_text().splitlines()
    commands, inside = [], False
    for line in lines:
        if line.startswith("```sh"):
            inside = True
            block: list[str] = []
            continue
        if inside and line.startswith("```"):
            inside = False
            commands.append(block)
            continue
        if inside:
            block.append(line)
    return [b[0] for b in commands if len(b) == 1]


def test_ci_runs_the_readme_test_command_verbatim():
    first, second = _readme_commands()[:2]
    ci = (ROOT / ".ci" / "run").read_text().splitlines()
    assert second in ci
    assert "pytest" in second and "[test]" in second and "ngspice" in second
    assert "symbias" in first and "examples/" in first


def test_readme_starts_with_the_job_and_carries_the_cautions():
    raw = (ROOT / "README.md").read_text()
    text = " ".join(raw.split())
    first_paragraph = raw.split("\n\n")[1]
    assert "designer" in first_paragraph and "bias" in first_paragraph
    assert "design aids" in text and "sign-off needs full simulation and measurement" in text
    assert "local codes" in text


def test_first_readme_command_example_exists():
    first = _readme_commands()[0]
    example = next(word for word in first.split() if word.startswith("examples/"))
    assert (ROOT / example).is_file()


def test_developers_guide_names_existing_paths():
    import re

    text = (ROOT / "DEVELOPERS.md").read_text()
    named = set(re.findall(r"`((?:symbias|docs|tests|bench|topologies|examples)/[\w./-]+)`", text))
    assert len(named) >= 5, named
    for path in sorted(named):
        assert (ROOT / path).exists(), f"DEVELOPERS.md names {path}, which does not exist"
