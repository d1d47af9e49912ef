"""Issue 26: a report's figures are drawn by two processes at once (output/drawing.py).

The reference is the single-process drawing: every figure must be drawn exactly once, to the
same bytes (PNG) as when this process draws it alone, and a figure the second process fails
to draw must be drawn here, raising here what it raises. The jobs below are this test's own
(a module written to a temporary folder that the second process imports); the report test
draws the families' real figures."""

from __future__ import annotations

import functools
import json
import os
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

from sensitivity.output import drawing
from sensitivity.output.drawing import FigureWorker, draw_all

BUSY = drawing._busy  # the real one (the tests below count the machine as idle)

JOBS = '''
import os, time
from pathlib import Path

from sensitivity.output.atomic import replacing


def mark(paths, pause=0.0, fail=False):
    """Write this process's id to the first path (after a pause)."""
    if fail:
        raise ValueError("this job fails wherever it runs")
    time.sleep(pause)
    Path(paths[0]).write_text(str(os.getpid()))


def slow_whole(paths, started):
    """Begin a whole-or-nothing write, say so, then take long to finish it."""
    with replacing(paths[0], "w") as sink:
        Path(started).write_text("started")
        sink.write("part")
        time.sleep(30)
        sink.write("rest")
'''


@pytest.fixture(autouse=True)
def free_cores(monkeypatch):
    """The machine counts as idle here, whatever else runs beside the tests: the second
    process is started (a busy machine: `test_without_a_second_process_...`)."""
    monkeypatch.setattr(drawing, "_busy", lambda: False)


@pytest.fixture
def jobs_module(tmp_path, monkeypatch):
    """The test's jobs as a module both processes import (the second inherits PYTHONPATH)."""
    folder = tmp_path / "jobs"
    folder.mkdir()
    (folder / "drawing_jobs.py").write_text(textwrap.dedent(JOBS))
    path = os.pathsep.join(filter(None, [str(folder), os.environ.get("PYTHONPATH")]))
    monkeypatch.setenv("PYTHONPATH", path)
    monkeypatch.syspath_prepend(str(folder))
    import drawing_jobs

    yield drawing_jobs
    sys.modules.pop("drawing_jobs", None)


def test_every_job_is_drawn_once_and_both_processes_draw(jobs_module, tmp_path):
    out = [tmp_path / f"figure_{k}" for k in range(8)]
    jobs = [(functools.partial(jobs_module.mark, pause=0.3), [p]) for p in out]
    with FigureWorker() as worker:
        time.sleep(3)  # the second process has loaded matplotlib by then (about 0.5 s)
        worker.draw_all(jobs)
    drawn_by = [p.read_text() for p in out]
    assert str(os.getpid()) in drawn_by
    assert len(set(drawn_by)) == 2, drawn_by  # this process and the second one
    # this process takes from the front, the second from the back
    assert drawn_by[0] == str(os.getpid()) and drawn_by[-1] != str(os.getpid())


def test_a_job_that_fails_there_is_drawn_here_and_raises_here(jobs_module, tmp_path):
    jobs = [
        (functools.partial(jobs_module.mark, pause=0.5), [tmp_path / "a"]),
        (functools.partial(jobs_module.mark, fail=True), [tmp_path / "b"]),
    ]
    with FigureWorker() as worker, pytest.raises(ValueError, match="fails wherever"):
        time.sleep(3)
        worker.draw_all(jobs)
    assert (tmp_path / "a").read_text() == str(os.getpid())


def test_a_second_process_that_dies_leaves_its_jobs_to_this_one(jobs_module, tmp_path):
    out = [tmp_path / f"figure_{k}" for k in range(4)]
    jobs = [(functools.partial(jobs_module.mark, pause=0.2), [p]) for p in out]
    with FigureWorker() as worker:
        assert worker._process is not None
        worker._process.kill()
        worker._process.wait()
        worker.draw_all(jobs)
    assert [p.read_text() for p in out] == [str(os.getpid())] * 4


@pytest.mark.parametrize("why", ["no Python to start", "one processor", "a busy machine"])
def test_without_a_second_process_everything_is_drawn_here(jobs_module, tmp_path,
                                                           monkeypatch, why):  # fmt: skip
    if why == "no Python to start":
        monkeypatch.setattr(sys, "executable", "")
    elif why == "one processor":
        monkeypatch.setattr(drawing, "_processors", lambda: 1)
    else:  # every core busy: the real _busy, and a load of three on two processors
        monkeypatch.setattr(drawing, "_busy", BUSY)
        monkeypatch.setattr(drawing, "_processors", lambda: 2)
        monkeypatch.setattr(os, "getloadavg", lambda: (3.0, 3.0, 3.0))
        assert drawing._busy()
    out = [tmp_path / f"figure_{k}" for k in range(5)]
    with FigureWorker() as worker:
        assert worker._process is None
        worker.draw_all([(jobs_module.mark, [p]) for p in out])
    draw_all([(jobs_module.mark, [tmp_path / "alone"])])
    assert {p.read_text() for p in [*out, tmp_path / "alone"]} == {str(os.getpid())}


def test_stopped_while_drawing_it_leaves_no_file_and_no_temporary(jobs_module, tmp_path):
    target, started = tmp_path / "figure.txt", tmp_path / "started"
    worker = FigureWorker()
    process = worker._process
    assert process is not None and process.stdin is not None and process.stdout is not None
    assert drawing._receive(process.stdout) == drawing._READY
    # a job in the second process's hands, as draw_all hands it over
    drawing._send(process.stdin, (functools.partial(jobs_module.slow_whole, started=started),
                                  [target]))  # fmt: skip
    worker._drawing = True
    for _ in range(600):
        if started.exists():
            break
        time.sleep(0.05)
    assert started.exists(), "the second process never started the job"
    worker.close()  # asks it to stop: it removes the temporary file it was writing
    assert process.returncode is not None
    assert not target.exists()
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == []


def test_a_report_drawn_by_two_processes_has_the_same_figures(tmp_path):
    """The families' real figures, drawn with and without the second process: the same
    bytes, PNG and SVG."""
    from sensitivity.evalues.core import evalue
    from sensitivity.output.report import Reproduce, write_report

    results = [(f"Estimate {k}", evalue("rr", 1.2 + k / 10, (1.05 + k / 20, 1.6 + k / 10)))
               for k in range(4)]  # fmt: skip
    with FigureWorker() as worker:
        time.sleep(3)
        both = write_report(results, tmp_path / "two", Reproduce("x"), worker)
    with FigureWorker() as worker:  # no second process: all drawn here
        worker.close()
        here = write_report(results, tmp_path / "here", Reproduce("x"), worker)
    for name in ("forest", "evalue_1", "evalue_2", "evalue_3", "evalue_4"):
        for kind in ("png", "svg"):
            drawn = (both["folder"] / f"{name}.{kind}").read_bytes()
            assert drawn == (here["folder"] / f"{name}.{kind}").read_bytes(), (name, kind)
    assert json.loads(both["json"].read_text()) == json.loads(here["json"].read_text())
    for folder in (both["folder"], here["folder"]):
        assert sorted(p.name for p in folder.iterdir() if p.name.startswith(".")) == []


def test_the_data_report_leaves_no_process_behind(tmp_path):
    """The command starts a second process for the figures: it has ended when the command
    returns, and every figure is in the folder (harbourside demo: our own scenario)."""
    root = Path(__file__).resolve().parent.parent
    data, out = str(root / "demo" / "harbourside_bp.csv"), str(tmp_path / "r")
    code = textwrap.dedent(f"""
        import sys
        sys.argv = ["sensitivity", "report", "--data", {data!r},
                    "--formula", "sbp ~ commute_min + age + female + smoker + C(shift) + bmi",
                    "--treatment", "commute_min", "--model", "ols", "--out", {out!r}]
        import cli
        try:
            cli.main()
        except SystemExit:
            pass
        import os
        children = [p for p in os.listdir("/proc") if p.isdigit()
                    and open(f"/proc/{{p}}/stat").read().split()[3] == str(os.getpid())]
        print("children", len(children))
    """)  # fmt: skip
    env = {**os.environ, "PYTHONPATH": str(root)}
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                         cwd=root, timeout=300)  # fmt: skip
    assert "children 0" in res.stdout, (res.stdout, res.stderr)
    names = sorted(p.name for p in (tmp_path / "r").iterdir())
    assert names == sorted(
        ["evalue_1.png", "evalue_1.svg", "forest.png", "forest.svg", "partial_r2_1.png",
         "partial_r2_1.svg", "report.html", "report.json", "report.md", "tables.tex"]
    )  # fmt: skip


def test_a_job_that_cannot_travel_is_drawn_here(jobs_module, tmp_path):
    """A draw function that pickle cannot carry (a lambda) is drawn by this process."""
    out = [tmp_path / f"figure_{k}" for k in range(3)]
    jobs = [(functools.partial(jobs_module.mark, pause=0.3), [p]) for p in out[:2]]
    jobs.append((lambda paths: jobs_module.mark(paths), [out[2]]))
    with FigureWorker() as worker:
        time.sleep(3)
        worker.draw_all(jobs)
    assert out[2].read_text() == str(os.getpid())
    assert all(p.read_text() for p in out)


def test_the_same_report_twice_is_the_same_files(run, tmp_path):
    """The README's promise: the same inputs give the same folder, figures included (no
    dates, fixed SVG ids), however the figures were shared between the processes."""
    root = Path(__file__).resolve().parent.parent
    runs = []
    for _ in range(2):
        res = run("report", "--estimates", root / "demo" / "cohort_estimates.csv", "--out",
                  tmp_path / "r")  # fmt: skip
        assert res.exit_code == 0, res.stderr
        runs.append({p.name: p.read_bytes() for p in sorted((tmp_path / "r").iterdir())})
    assert len(runs[0]) == 16 and runs[0] == runs[1]
