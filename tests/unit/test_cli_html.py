"""Tests of audit.cli.html: --html is checked before any work and written after the JSON report."""

from __future__ import annotations

import argparse
import os
import stat

import pytest
from reportdata import make_comparison

from audit.cli.html import add_html_option, check_html_target, write_html
from audit.cli.parser import build_parser
from audit.errors import UserError


def test_every_command_that_writes_a_report_takes_the_option():
    parser = build_parser()
    for argv in (["audit", "m.onnx"], ["compare", "a.onnx", "b.onnx"], ["advise", "m.onnx"], ["show", "r.json"],
                 ["demo"]):  # fmt: skip
        assert parser.parse_args([*argv, "--html", "r.html"]).html == "r.html"
    p = argparse.ArgumentParser()
    add_html_option(p)
    assert p.parse_args([]).html is None


def test_the_target_is_refused_when_it_would_destroy_something(tmp_path):
    model, other = tmp_path / "m.onnx", tmp_path / "notes.html"
    model.write_bytes(b"x")
    other.write_text("<html>mine</html>", encoding="utf-8")
    check_html_target(None, [])
    check_html_target(str(tmp_path / "new.html"), [str(model)])
    with pytest.raises(UserError, match="is the model, input spec, checkpoint or another report of this run"):
        check_html_target(str(model), [str(model)])
    with pytest.raises(UserError, match="is the model, input spec, checkpoint or another report of this run"):
        check_html_target(str(tmp_path / "r.json"), [None, str(tmp_path / "r.json")])  # the JSON report's path
    with pytest.raises(UserError, match="is a folder"):
        check_html_target(str(tmp_path), [])
    with pytest.raises(UserError, match="is not a netdim HTML report"):
        check_html_target(str(other), [])


def test_the_page_is_written_readable_by_others_and_can_be_written_again(tmp_path):
    target = tmp_path / "deep" / "r.html"
    args = argparse.Namespace(html=str(target))
    assert write_html(make_comparison(), args) == target
    assert '<meta name="generator" content="netdim' in target.read_text(encoding="utf-8")
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(target.stat().st_mode) == 0o666 & ~mask
    check_html_target(str(target), [])  # a netdim page may be replaced
    assert write_html(make_comparison(), argparse.Namespace(html=None)) is None


def test_a_page_that_cannot_be_written_says_how_to_write_it_again(tmp_path):
    blocked = tmp_path / "file"
    blocked.write_text("x")
    args = argparse.Namespace(html=str(blocked / "r.html"))  # a file stands where the folder would go
    with pytest.raises(UserError, match=r"netdim show .*r.json --html PATH"):
        write_html(make_comparison(), args, tmp_path / "r.json")
