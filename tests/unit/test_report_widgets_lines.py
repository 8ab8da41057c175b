"""Tests of audit.report.widgets.lines: wrapping, wrapped text, titles, render-time safety and ASCII."""

from __future__ import annotations

import io

from rich.console import Console
from rich.text import Text

from audit.report.text import GLUE
from audit.report.widgets import AsciiOnly, TitleRule, WrappedText, clean, safe_text, wrap


def show(renderable, width: int = 40, encoding: str = "utf-8") -> str:
    buf = io.TextIOWrapper(io.BytesIO(), encoding=encoding, errors="strict")
    console = Console(file=buf, width=width, no_color=True, force_terminal=False)
    console.print(renderable)
    buf.flush()
    return buf.buffer.getvalue().decode(encoding)


def test_wrap_breaks_at_spaces_but_never_inside_relations_or_intervals():
    text = "the run used N = 4,096 points and ν ≥ 1 holds; interval [1.234, 1.456] of ν 1.345 here"
    for width in range(16, 40):  # the interval itself is 14 cells wide
        lines = wrap(text, width)
        assert all(len(line) <= width for line in lines)
        joined = "\n".join(lines)
        for whole in ("N = 4,096", "ν ≥ 1", "[1.234, 1.456]", "ν 1.345"):
            assert whole in joined, (width, lines)
    assert wrap(f"a{GLUE}b c", 3) == ["a b", "c"]  # glue is shown as a space
    assert wrap("one\ntwo", 20) == ["one", "two"]
    assert wrap("x" * 25, 10) == ["xxxxx…xxxx"]


def test_long_words_are_shortened_in_the_middle_never_broken():
    word = "/encoder/blocks.0/attention/softmax/Softmax_output_0"
    # 20 cells: 19 around the one-cell ellipsis, the start taking the odd one (10 + 9)
    assert wrap(f"layer {word} here", 20) == ["layer", word[:10] + "…" + word[-9:], "here"]
    assert wrap(word, 20, "...") == [word[:9] + "..." + word[-8:]]  # 17 cells around "..."
    # a name glued to its number is shortened alone: the number stays whole
    glued = wrap(f"{word}{GLUE}1.234", 24)
    assert glued == [word[:9] + "…" + word[-8:] + " 1.234"] and len(glued[0]) == 24


def test_wrapped_text_hangs_its_continuation_lines_under_the_text():
    text = show(WrappedText("one two three four five six seven eight nine ten", "label  "), width=30)
    lines = text.splitlines()
    assert lines[0].startswith("label  one") and all(line.startswith(" " * 7) for line in lines[1:])
    assert all(line == line.rstrip() for line in lines)
    narrow = show(WrappedText("one two three", "a long label "), width=16).splitlines()
    assert narrow[0] == "a long label" and narrow[1].startswith("one")  # too narrow to hang


def test_titles_rule_the_line_or_wrap_when_too_long():
    assert show(TitleRule("Outputs"), width=30).rstrip("\n") == "Outputs " + "─" * 22
    long = show(TitleRule("Inputs of a very long output name, ranked by total index"), width=30)
    assert "─" not in long and len(long.splitlines()) == 2
    assert show(TitleRule(), width=10).rstrip("\n") == "─" * 10


def test_ascii_is_decided_when_rendering():
    title, para = TitleRule("Mean dimension, old → new"), WrappedText("ν ≥ 1 ± 2", "• ")
    assert show(title, width=40, encoding="ascii").startswith("Mean dimension, old -> new ---")
    assert show(para, encoding="ascii").strip() == "* nu >= 1 +/- 2"
    assert "ν ≥ 1 ± 2" in show(para)  # the same objects on a UTF console
    forced = show(AsciiOnly(para))  # a UTF console, told to use ASCII
    assert forced.strip() == "* nu >= 1 +/- 2" and forced.isascii()
    assert show(AsciiOnly(TitleRule()), width=5).strip() == "-----"


def test_safe_text_escapes_controls_and_never_parses_markup():
    t = safe_text("[red]x[/red]\x1b[2J\nnext", "bold")
    assert isinstance(t, Text) and t.plain == "[red]x[/red]\\x1b[2J\\nnext" and t.spans[0].style == "bold"
    pieces = safe_text((("ν", "bold"), (" [/bold]", "")), ascii_only=True)
    assert pieces.plain == "nu [/bold]" and [s.style for s in pieces.spans] == ["bold"]
    assert clean("a\tb", ascii_only=True) == "a\\tb"
    out = show(WrappedText("name\x1b[31m[/bold]\nforged line"), width=60)
    assert out.strip() == "name\\x1b[31m[/bold]\\nforged line" and "\x1b" not in out
