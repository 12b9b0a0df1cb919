"""``vascplan plan --format jsonl`` at registry scale: workers, order, streaming, errors."""

from __future__ import annotations

import json

import pytest
import yaml
from click.testing import CliRunner

from tests.registry_cases import graft_case
from tests.routes_cases import case_data
from vascplan.cli import cli
from vascplan.routes.batch import plan_stream

BAD_LINE = "patient.height_cm: must be 100-230 cm (got 300)"


@pytest.fixture()
def registry(tmp_path):
    """Seven case files, refs TEST-00..06; the first is graft-heavy, so slowest."""
    paths = []
    for i in range(7):
        data = graft_case(12, seed=3) if i == 0 else case_data()
        data["patient"]["ref"] = f"TEST-{i:02d}"
        p = tmp_path / f"case-{i}.yaml"
        p.write_text(yaml.safe_dump(data), encoding="utf-8")
        paths.append(str(p))
    return paths


def _refs(output: str) -> list[str]:
    return [json.loads(line).get("case") for line in output.splitlines()]


def _run(*args, stdin=None):
    return CliRunner().invoke(cli, ["plan", "--format", "jsonl", *args], input=stdin)


def test_jobs_2_keeps_input_order_and_gives_the_same_lines_as_jobs_1(registry):
    one = _run(*registry, "--jobs", "1")
    two = _run(*registry, "--jobs", "2")
    assert one.exit_code == 0 and two.exit_code == 0, two.output
    assert _refs(two.stdout) == [f"TEST-{i:02d}" for i in range(7)]
    assert two.stdout == one.stdout
    assert two.stderr == ""  # no progress bar when standard error is not a terminal


def test_files_from_a_file_and_from_standard_input(registry, tmp_path):
    listing = tmp_path / "list.txt"
    listing.write_text("\n".join(registry[1:4]) + "\n\n", encoding="utf-8")
    res = _run(registry[0], "--files-from", str(listing), "--jobs", "2")
    assert res.exit_code == 0, res.output
    assert _refs(res.stdout) == ["TEST-00", "TEST-01", "TEST-02", "TEST-03"]
    res = _run("--files-from", "-", "--jobs", "1", stdin="\n".join(reversed(registry)) + "\n")
    assert res.exit_code == 0, res.output
    assert _refs(res.stdout) == [f"TEST-{i:02d}" for i in reversed(range(7))]


def test_no_cases_at_all_is_one_usage_line():
    res = CliRunner().invoke(cli, ["plan"])
    assert res.exit_code == 2
    assert "give one or more CASE files, or --files-from FILE" in res.output


@pytest.mark.parametrize("jobs", ["1", "2"])
def test_a_bad_case_in_the_middle_gives_its_error_line_and_the_run_goes_on(registry, tmp_path,
                                                                           jobs):
    bad = tmp_path / "bad.yaml"
    bad.write_text("format: vascplan-case/1\npatient: {ref: DEMO-99, sex: male, height_cm: 300}\n")
    missing = str(tmp_path / "nowhere.yaml")
    res = _run(*registry[:3], str(bad), missing, *registry[3:], "--jobs", jobs)
    assert res.exit_code == 2
    lines = [json.loads(line) for line in res.stdout.splitlines()]
    assert len(lines) == 9
    assert lines[3] == {"case": str(bad), "error": f"{bad}: {BAD_LINE}"}
    assert lines[4] == {"case": missing, "error": f"{missing}: file not found"}
    assert [d["case"] for d in lines[:3] + lines[5:]] == [f"TEST-{i:02d}" for i in range(7)]
    assert all("routes" in d for d in lines[:3] + lines[5:])
    assert res.stderr == "error: 2 of 9 cases failed; their error lines are in the output\n"


@pytest.mark.parametrize("jobs", [1, 2])
def test_first_result_comes_before_the_last_case_is_read(registry, jobs):
    read: list[str] = []

    def paths():  # 40 cases, as from a pipe; counts what has been read
        for i in range(40):
            read.append(registry[i % 7])
            yield registry[i % 7]

    stream = plan_stream(paths(), jobs=jobs, window=2, batch=2)
    first = next(stream)
    assert first.ok and json.loads(first.line)["case"] == "TEST-00"
    assert len(read) <= 4 < 40  # at most the window of batches read so far
    rest = list(stream)
    assert len(rest) == 39 and len(read) == 40
    assert [json.loads(o.line)["case"] for o in rest[:6]] == [f"TEST-{i:02d}" for i in
                                                              range(1, 7)]
