"""distill_static's refusals and its quiet output, without running model2vec's
minutes-long distillation (a stand-in takes its place where the output is checked)."""

from __future__ import annotations

import sys

import pytest

from trawl.distill import distill_static
from trawl.errors import UsageError

from .conftest import invoke


def test_out_of_range_vector_size_names_the_option_users_know():
    with pytest.raises(UsageError, match=r"^vector size 500 must be between 1 and 384 "):
        distill_static("unused", pca_dims=500)


def test_an_output_that_is_not_a_model_folder_is_refused_without_naming_a_flag(tmp_path):
    (tmp_path / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(UsageError) as err:
        distill_static(tmp_path)
    assert str(err.value).startswith(f"{tmp_path} exists and is not a static model folder")
    assert "-o " not in str(err.value)  # library messages never name a CLI flag


def test_no_progress_bars_when_stderr_is_not_a_terminal(tmp_path, monkeypatch, capsys):
    """model2vec draws its bars straight to stderr; in a log (make demo's) they were
    thousands of '\\r' lines. Redirected stderr is not a terminal: nothing may reach it."""
    import model2vec.distill

    class _Model:
        def save_pretrained(self, folder):
            from pathlib import Path
            Path(folder).mkdir(parents=True)
            (Path(folder) / "config.json").write_text("{}", encoding="utf-8")

    def fake_distill(**kwargs):
        sys.stderr.write("Encoding tokens:  50%|#####     | 1/2\r")
        return _Model()

    monkeypatch.setattr(model2vec.distill, "distill", fake_distill)
    distill_static(tmp_path / "static")
    assert capsys.readouterr().err == ""
    assert (tmp_path / "static" / "config.json").is_file()


def test_cli_error_is_one_line(tmp_path):
    (tmp_path / "notes.txt").write_text("mine", encoding="utf-8")
    result = invoke(["distill", "-o", tmp_path])
    assert result.exit_code == 2
    assert result.stderr.startswith("error: ") and result.stderr.count("\n") == 1
