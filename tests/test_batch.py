"""`truss-verify batch`: a job folder checked case by case, in parallel, with one summary.

The folder of invented trusses comes from tests/jobfolder.py: claims from the tool's own solve,
some with one value planted wrong, so each case's verdict is known before the run.
"""

from __future__ import annotations

import csv
import io
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner
from jobfolder import write_job_folder

from verify.batch.run import STATUS_ORDER, batch_exit, local_runner, run_batch
from verify.batch.summary import SUMMARY_COLUMNS, TIME_COLUMN
from verify.cli import main

ROOT = Path(__file__).resolve().parents[1]


def run_cli(*args: object) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, ["batch", *(str(a) for a in args)])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stdout, result.stderr


def summary_rows(path: Path) -> list[dict[str, str]]:
    """The case rows of a summary CSV (the caution row below the blank line left out)."""
    text = path.read_text(encoding="utf-8").split("\n\n")[0]
    return list(csv.DictReader(io.StringIO(text)))


@pytest.fixture(scope="module")
def job_folder(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict[str, str]]:
    root = tmp_path_factory.mktemp("job")
    return root, write_job_folder(root, 10)


def fresh_copy(
    job_folder: tuple[Path, dict[str, str]], tmp_path: Path
) -> tuple[Path, dict[str, str]]:
    source, expected = job_folder
    target = tmp_path / "job"
    shutil.copytree(source, target)
    return target, expected


def test_every_case_gets_its_planted_verdict_and_the_batch_exits_1(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    assert "discrepancies" in expected.values() and "agrees" in expected.values()
    code, out, err = run_cli(folder, "--jobs", 2)
    rows = summary_rows(folder / "truss-verify-batch" / "summary.csv")
    assert {r["case"]: r["status"] for r in rows} == expected
    assert code == 1
    assert [r["case"] for r in rows] == sorted(expected)  # the order found, not the order finished
    assert err.count("\n") == len(expected)  # one progress line per case, on stderr
    assert "discrepancies found" in out


def test_summary_names_the_most_serious_finding_and_links_each_report(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    run_cli(folder, "--jobs", 2)
    out = folder / "truss-verify-batch"
    rows = summary_rows(out / "summary.csv")
    index = (out / "index.html").read_text(encoding="utf-8")
    for row in rows:
        assert (out / row["report"]).is_file()
        assert f'href="{row["report"]}"' in index
        if expected[row["case"]] == "discrepancies":
            assert int(row["findings"]) >= 1 and row["most_serious"].startswith(
                "Claimed value differs"
            )
        else:
            assert row["findings"] == "0" and row["most_serious"] == ""
    assert list(rows[0]) == list(SUMMARY_COLUMNS)


def test_rerun_skips_unchanged_cases_and_rechecks_a_changed_claims_table(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    run_cli(folder, "--jobs", 2)
    agreeing = next(name for name, verdict in expected.items() if verdict == "agrees")
    claims = folder / agreeing / "claims.csv"
    lines = claims.read_text(encoding="utf-8").splitlines()
    member, value = lines[1].split(",")
    lines[1] = f"{member},{float(value) * 2 + 10:g}"  # a value no tolerance accepts
    claims.write_text("\n".join(lines) + "\n", encoding="utf-8")
    code, _, err = run_cli(folder, "--jobs", 2)
    rows = {r["case"]: r for r in summary_rows(folder / "truss-verify-batch" / "summary.csv")}
    assert rows[agreeing]["checked"] == "this run" and rows[agreeing]["status"] == "discrepancies"
    assert all(r["checked"] == "unchanged" for name, r in rows.items() if name != agreeing)
    assert all(r["status"] == expected[name] for name, r in rows.items() if name != agreeing)
    assert err.count("unchanged since the last run") == len(expected) - 1
    code, _, _ = run_cli(folder, "--recheck")
    assert all(
        r["checked"] == "this run"
        for r in summary_rows(folder / "truss-verify-batch" / "summary.csv")
    )


def test_rerun_rechecks_a_case_whose_case_file_changed(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    run_cli(folder, "--jobs", 1)
    name = sorted(expected)[0]
    case = folder / name / "case.toml"
    case.write_text(
        case.read_text(encoding="utf-8").replace('title = "', 'title = "revised '), encoding="utf-8"
    )
    run_cli(folder, "--jobs", 1)
    rows = {
        r["case"]: r["checked"] for r in summary_rows(folder / "truss-verify-batch" / "summary.csv")
    }
    assert rows[name] == "this run"
    assert sum(1 for checked in rows.values() if checked == "unchanged") == len(expected) - 1


def _bad_folder(tmp_path: Path, job_folder) -> tuple[Path, dict[str, str]]:
    folder, expected = fresh_copy(job_folder, tmp_path)
    (folder / "broken").mkdir()
    (folder / "broken" / "case.toml").write_text(
        "title = 'x'\n[joints\nA = [0, 0]\n", encoding="utf-8"
    )
    (folder / "broken" / "claims.csv").write_text("member,dead\nAB,1\n", encoding="utf-8")
    (folder / "no-claims").mkdir()
    shutil.copy(folder / sorted(expected)[0] / "case.toml", folder / "no-claims" / "case.toml")
    (folder / "two-claims").mkdir()
    shutil.copy(folder / sorted(expected)[0] / "case.toml", folder / "two-claims" / "case.toml")
    for name in ("claims.csv", "claims.xlsx"):
        shutil.copy(folder / sorted(expected)[0] / "claims.csv", folder / "two-claims" / name)
    (folder / "orphan").mkdir()
    shutil.copy(folder / sorted(expected)[0] / "claims.csv", folder / "orphan" / "claims.csv")
    (folder / "other-truss").mkdir()
    shutil.copy(folder / sorted(expected)[0] / "case.toml", folder / "other-truss" / "case.toml")
    (folder / "other-truss" / "claims.csv").write_text(
        "member,dead (kN)\nX1,4\nX2,5\n", encoding="utf-8"
    )
    return folder, expected


def test_bad_cases_are_reported_with_their_reason_and_never_stop_the_others(job_folder, tmp_path):
    folder, expected = _bad_folder(tmp_path, job_folder)
    code, _, _ = run_cli(folder, "--jobs", 2)
    rows = {r["case"]: r for r in summary_rows(folder / "truss-verify-batch" / "summary.csv")}
    reasons = {
        "broken": "case.toml:2",
        "no-claims": "no claims table",
        "two-claims": "several claims tables (claims.csv, claims.xlsx)",
        "orphan": "without a case.toml",
        "other-truss": "no label matches",
    }
    for name, words in reasons.items():
        assert rows[name]["status"] == "bad-input" and rows[name]["exit"] == "2"
        assert words in rows[name]["reason"], rows[name]["reason"]
        assert rows[name]["report"] == ""
    assert {name: rows[name]["status"] for name in expected} == expected
    assert code == 1  # bad cases never hide the discrepancies found elsewhere


def test_bad_cases_beside_agreeing_ones_exit_2(tmp_path):
    expected = write_job_folder(tmp_path / "job", 3, wrong_every=99)
    assert set(expected.values()) == {"agrees"}
    (tmp_path / "job" / "lonely").mkdir()
    (tmp_path / "job" / "lonely" / "case.toml").write_text("title = 'x'\n", encoding="utf-8")
    code, _, _ = run_cli(tmp_path / "job", "--jobs", 1)
    assert code == 2


@pytest.mark.parametrize(
    "codes, expected",
    [
        ([0, 0], 0),
        ([0, 2], 2),
        ([2, 1, 0], 1),
        ([2, 3], 3),
        ([1, 3, 2], 1),
        ([70, 2], 70),
        ([3, 70], 3),
        ([], 0),
    ],
)
def test_batch_status_is_the_most_serious_in_the_documented_order(codes, expected):
    assert batch_exit(codes) == expected
    assert STATUS_ORDER[0] == 1  # discrepancies outrank every other case status


def test_a_fault_in_one_case_is_reported_and_the_others_are_checked(
    job_folder, tmp_path, monkeypatch
):
    import verify.service as service  # the check service calls the analysis for every caller

    folder, expected = fresh_copy(job_folder, tmp_path)
    victim = sorted(expected)[1]
    real = service.analyse

    def analyse(model, **kwargs):
        if victim in model.source:
            raise ZeroDivisionError("planted fault")
        return real(model, **kwargs)

    monkeypatch.setattr(service, "analyse", analyse)
    outcome = run_batch(folder, runner=local_runner(1))  # in this process, where the patch holds
    statuses = {job.name: result.status for job, result in outcome.pairs}
    assert statuses.pop(victim) == "fault"
    assert statuses == {n: v for n, v in expected.items() if n != victim}
    reason = dict((job.name, result.reason) for job, result in outcome.pairs)[victim]
    assert "ZeroDivisionError: planted fault" in reason


def test_the_library_prints_nothing(job_folder, tmp_path, capfd):
    folder, _ = fresh_copy(job_folder, tmp_path)
    seen = []
    run_batch(
        folder,
        runner=local_runner(2),
        on_result=lambda result, done, total: seen.append((done, total)),
    )
    captured = capfd.readouterr()
    assert captured.out == "" and captured.err == ""
    assert [done for done, _ in seen] == list(range(1, len(seen) + 1)) and seen[-1][1] == len(seen)


# -- manifest ------------------------------------------------------------------------------------
def test_manifest_rows_run_with_their_options_and_bad_rows_are_reported(tmp_path):
    expected = write_job_folder(tmp_path / "cases", 3, wrong_every=99)
    first, second = sorted(expected)[:2]
    # A consultant's table in compression-positive kips: agrees only when the row's options are
    # used.
    lines = (tmp_path / "cases" / first / "claims.csv").read_text(encoding="utf-8").splitlines()
    flipped = ["member,dead"] + [
        f"{m},{-float(v) / 4.4482216152605:.6g}" for m, v in (line.split(",") for line in lines[1:])
    ]
    (tmp_path / "cases" / first / "kips.csv").write_text(
        "\n".join(flipped) + "\n", encoding="utf-8"
    )
    manifest = tmp_path / "manifest.csv"
    manifest.write_text(
        "Name,case,claims,sign,unit,rtol\n"
        f"kips,cases/{first},cases/{first}/kips.csv,compression-positive,kip,\n"
        f"plain,cases/{second}/case.toml,cases/{second}/claims.csv,,,0.02\n"
        f"no-claims,cases/{second},,,,\n"
        f"bad-rtol,cases/{second},cases/{second}/claims.csv,,,abc\n"
        f"bad-sign,cases/{second},cases/{second}/claims.csv,upside-down,,\n"
        f"missing,cases/nowhere,cases/{second}/claims.csv,,,\n",
        encoding="utf-8",
    )
    code, _, _ = run_cli(manifest, "--jobs", 2)
    rows = {r["case"]: r for r in summary_rows(tmp_path / "truss-verify-batch" / "summary.csv")}
    assert rows["kips"]["status"] == "agrees" and rows["plain"]["status"] == "agrees"
    assert "no claims given" in rows["no-claims"]["reason"]
    assert "rtol 'abc' is not a number" in rows["bad-rtol"]["reason"]
    assert "sign=upside-down: must be one of" in rows["bad-sign"]["reason"]
    assert "file not found" in rows["missing"]["reason"]
    assert rows["missing"]["origin"] == "manifest.csv row 7"
    assert code == 2


def test_a_manifest_in_the_folder_is_used_instead_of_searching_it(tmp_path):
    expected = write_job_folder(tmp_path, 3, wrong_every=99)
    only = sorted(expected)[0]
    (tmp_path / "manifest.csv").write_text(
        f"case,claims\n{only},{only}/claims.csv\n", encoding="utf-8"
    )
    code, _, _ = run_cli(tmp_path)
    assert [r["case"] for r in summary_rows(tmp_path / "truss-verify-batch" / "summary.csv")] == [
        only
    ]
    assert code == 0


@pytest.mark.parametrize(
    "text, words",
    [
        ("case,claim\nx,y\n", "Did you mean 'claims'?"),
        ("case,claims,colour\nx,y,z\n", "unknown column 'colour'"),
        ("case,claims\n", "no case rows"),
        ("", "the manifest is empty"),
    ],
)
def test_an_unreadable_manifest_is_bad_input_with_one_message(tmp_path, text, words):
    manifest = tmp_path / "manifest.csv"
    manifest.write_text(text, encoding="utf-8")
    code, out, err = run_cli(manifest)
    assert code == 2 and words in err and "Traceback" not in err + out
    assert not (tmp_path / "truss-verify-batch").exists()


# -- outputs -------------------------------------------------------------------------------------
def test_summary_cells_cannot_start_a_spreadsheet_formula(tmp_path):
    expected = write_job_folder(tmp_path / "job", 1)
    (tmp_path / "job" / sorted(expected)[0]).rename(tmp_path / "job" / "=HYPERLINK(1)")
    run_cli(tmp_path / "job")
    text = (tmp_path / "job" / "truss-verify-batch" / "summary.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK(1)" in text
    assert not any(cell.startswith("=") for row in csv.reader(io.StringIO(text)) for cell in row)


def test_summary_over_an_input_is_refused_and_the_input_kept(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    claims = folder / sorted(expected)[0] / "claims.csv"
    before = claims.read_bytes()
    code, _, err = run_cli(folder, "--summary", claims)
    assert code == 2 and "over an input file" in err
    assert claims.read_bytes() == before
    assert not (folder / "truss-verify-batch" / "reports").exists() or not any(
        (folder / "truss-verify-batch" / "reports").iterdir()
    )


def test_summary_in_a_missing_folder_is_refused_before_any_case_runs(job_folder, tmp_path):
    folder, _ = fresh_copy(job_folder, tmp_path)
    code, _, err = run_cli(folder, "--summary", tmp_path / "nowhere" / "s.csv")
    assert code == 2 and "does not exist" in err
    assert not (folder / "truss-verify-batch" / "reports").exists()


def test_a_closed_stderr_stops_the_progress_lines_not_the_batch(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    child = subprocess.Popen(
        [sys.executable, "-m", "verify.cli", "batch", str(folder), "--jobs", "2"],
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )
    assert child.stderr is not None
    child.stderr.close()  # as `2>&1 | head -1` does once it has its line
    assert child.wait(timeout=300) == 1
    assert len(summary_rows(folder / "truss-verify-batch" / "summary.csv")) == len(expected)


def test_inputs_are_unchanged_by_a_batch_run(job_folder, tmp_path):
    folder, _ = fresh_copy(job_folder, tmp_path)
    before = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file()}
    run_cli(folder, "--jobs", 2)
    assert {p: p.read_bytes() for p in before} == before


def test_output_folder_is_not_searched_for_cases(job_folder, tmp_path):
    folder, expected = fresh_copy(job_folder, tmp_path)
    run_cli(folder, "--out", folder / "results")
    (folder / "results" / "planted").mkdir()
    shutil.copytree(folder / sorted(expected)[0], folder / "results" / "planted" / "x")
    run_cli(folder, "--out", folder / "results")
    assert len(summary_rows(folder / "results" / "summary.csv")) == len(expected)


def test_bundled_cases_run_as_a_folder(tmp_path):
    shutil.copytree(ROOT / "cases", tmp_path / "cases")
    code, _, _ = run_cli(tmp_path / "cases", "--jobs", 2)
    rows = summary_rows(tmp_path / "cases" / "truss-verify-batch" / "summary.csv")
    assert {r["case"] for r in rows} == {
        p.parent.name for p in (ROOT / "cases").glob("*/case.toml")
    }
    assert all(
        r["status"] == "discrepancies" for r in rows
    )  # each bundled table has planted errors
    assert code == 1


# -- Dask ----------------------------------------------------------------------------------------
# The cluster runs in a child process, and so does the command that uses it: Dask leaves threads
# running in a process that used it, and a process with threads must not fork (the pipeline then
# stays in one process, which other tests check it does not do needlessly).
CLUSTER_SCRIPT = """
import sys
from distributed import LocalCluster
with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, protocol="tcp://",
                  host="127.0.0.1", dashboard_address=None) as cluster:
    print(cluster.scheduler_address, flush=True)
    sys.stdin.read()  # until the test closes the pipe
"""


def test_a_local_dask_cluster_gives_the_same_summary_as_the_local_run(job_folder, tmp_path):
    pytest.importorskip("distributed")  # the test extra installs it; see pyproject.toml
    folder, _ = fresh_copy(job_folder, tmp_path)
    run_cli(folder, "--jobs", 2, "--summary", tmp_path / "local.csv", "--out", tmp_path / "local")
    cluster = subprocess.Popen(
        [sys.executable, "-c", CLUSTER_SCRIPT],
        stdin=subprocess.PIPE,
        stdout=subprocess.PIPE,
        stderr=subprocess.DEVNULL,
        text=True,
    )
    try:
        assert cluster.stdout is not None
        address = cluster.stdout.readline().strip()
        assert address.startswith("tcp://"), address
        done = subprocess.run(
            [
                sys.executable,
                "-m",
                "verify.cli",
                "batch",
                str(folder),
                "--scheduler",
                address,
                "--summary",
                str(tmp_path / "dask.csv"),
                "--out",
                str(tmp_path / "dask"),
            ],
            capture_output=True,
            text=True,
            timeout=300,
        )
    finally:
        cluster.communicate(input="", timeout=60)
    local, remote = summary_rows(tmp_path / "local.csv"), summary_rows(tmp_path / "dask.csv")
    for rows in (local, remote):
        for row in rows:
            del row[TIME_COLUMN]
    assert remote == local
    progress = [line for line in done.stderr.splitlines() if line.startswith("[")]
    assert done.returncode == 1 and len(progress) == len(local), done.stderr
    assert sorted(p.name for p in (tmp_path / "dask" / "reports").iterdir()) == sorted(
        p.name for p in (tmp_path / "local" / "reports").iterdir()
    )


def test_scheduler_without_the_extra_says_how_to_install_it(job_folder, tmp_path, monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # what an install without the extra sees
    folder, _ = fresh_copy(job_folder, tmp_path)
    code, out, err = run_cli(folder, "--scheduler", "tcp://127.0.0.1:1")
    assert code == 2
    assert (
        err.strip()
        == "--scheduler needs Dask's distributed scheduler, an optional extra: pip install "
        "'truss-verify[cluster]'"
    )
    assert not (folder / "truss-verify-batch" / "summary.csv").exists()


def test_jobs_and_scheduler_together_are_refused(job_folder, tmp_path):
    folder, _ = fresh_copy(job_folder, tmp_path)
    code, _, err = run_cli(folder, "--jobs", 2, "--scheduler", "tcp://127.0.0.1:1")
    assert code == 2 and "one or the other" in err
