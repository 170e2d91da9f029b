"""The command line's label, sheet and timeout options, read without running a model."""
from __future__ import annotations

from honebench.cli import build_parser
from honebench.commands import _check_from_args
from honebench.core.checks import CheckSpec
from tests.test_cli import honebench


def _args(*argv):
    return build_parser().parse_args(["grade", "set.csv", *argv])


def test_each_label_flag_is_one_label_commas_kept(tmp_path, capsys):
    labels_file = tmp_path / "labels.txt"
    labels_file.write_text("lost, found\nlate sailing\n")
    check = _check_from_args(CheckSpec(), _args(
        "--check", "label", "--label", "refund, money back", "--label", "timetable",
        "--labels-file", str(labels_file)))
    assert check.labels == ("refund, money back", "timetable", "lost, found", "late sailing")
    assert capsys.readouterr().err == ""


def test_comma_list_still_works_but_warns_about_spaces(capsys):
    check = _check_from_args(CheckSpec(), _args("--check", "label", "--labels",
                                                "refund, money,timetable"))
    assert check.labels == ("refund", "money", "timetable")
    err = capsys.readouterr().err
    assert err.startswith("honebench: warning: --labels was split") and "--label" in err
    _check_from_args(CheckSpec(), _args("--check", "label", "--labels", "refund,timetable"))
    assert capsys.readouterr().err == ""


def test_defaults_for_the_new_options():
    args = _args()
    assert (args.sheet, args.skip_rows, args.timeout) == (None, 0, 30.0)
    args = _args("--sheet", "Items", "--skip-rows", "2", "--timeout", "4.5")
    assert (args.sheet, args.skip_rows, args.timeout) == ("Items", 2, 4.5)
    resume = build_parser().parse_args(["resume", "p.hone", "3", "--timeout", "9"])
    assert (resume.run, resume.timeout) == (3, 9.0)


def test_sheet_option_on_a_project_file_is_refused(tmp_path, sample_dir):
    from honebench.core.project import Project

    path = tmp_path / "desk.hone"
    Project(path).close()
    done = honebench("grade", path, "--sheet", "2", "--wording", "x", home=tmp_path,
                     check=False)
    assert done.returncode == 2 and "--sheet and --skip-rows" in done.stderr
    assert "Traceback" not in done.stderr
