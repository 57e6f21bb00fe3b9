"""unified_diff and print_diff, checked against git itself (`git diff --no-index`, `git apply`)."""

from __future__ import annotations

import io
import subprocess
import sys
from pathlib import Path

from linkcheck.report.diff import CAUTION, print_diff, unified_diff

LINES = [f'  <link name="l{k}"><visual/></link>' for k in range(20)]
OLD = ("<robot>\n" + "\n".join(LINES) + "\n</robot>\n").encode()
NEW = OLD.replace(b'<link name="l9"><visual/>', b'<link name="l9"><inertial/>')

def _git_diff(tmp_path: Path, old: bytes, new: bytes) -> str:
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    (tmp_path / "a" / "robot.urdf").write_bytes(old)
    (tmp_path / "b" / "robot.urdf").write_bytes(new)
    run = subprocess.run(
        ["git", "diff", "--no-index", "--no-color", "-U3", "a/robot.urdf", "b/robot.urdf"],
        cwd=tmp_path, capture_output=True, text=True,
    )
    assert run.returncode == 1, run.stderr  # 1: the files differ
    return run.stdout


def test_shape_headers_and_only_changed_lines() -> None:
    text = unified_diff("robots/demo.urdf", OLD, NEW)
    lines = text.splitlines()
    assert lines[0] == "--- a/robots/demo.urdf" and lines[1] == "+++ b/robots/demo.urdf"
    # l9 is line 11 (line 1 is <robot>); GNU diff's unified format: 3 context lines each side -> lines 8..14.
    assert lines[2] == "@@ -8,7 +8,7 @@"
    assert [ln for ln in lines[3:] if ln[0] in "+-"] == [
        '-  <link name="l9"><visual/></link>',
        '+  <link name="l9"><inertial/></link>',
    ]
    assert len([ln for ln in lines[3:] if ln.startswith(" ")]) == 6
    assert text.endswith("\n")


def test_equal_files_give_no_diff() -> None:
    assert unified_diff("x.urdf", OLD, OLD) == ""
    out = io.StringIO()
    print_diff("", out, color=False)
    assert out.getvalue() == ""


def test_matches_git_diff_from_the_first_hunk(tmp_path: Path) -> None:
    new = NEW.replace(b'"l17"', b'"l17x"').replace(b"</robot>\n", b"</robot>")
    ours = unified_diff("robot.urdf", OLD, new)
    theirs = _git_diff(tmp_path, OLD, new)
    assert ours.splitlines()[2:] == theirs[theirs.index("@@"):].splitlines()
    assert "\\ No newline at end of file" in ours


def test_git_apply_reproduces_the_new_file(tmp_path: Path) -> None:
    (tmp_path / "robot.urdf").write_bytes(OLD)
    patch = tmp_path / "fix.patch"
    patch.write_text(unified_diff("robot.urdf", OLD, NEW))
    run = subprocess.run(["git", "apply", "--unsafe-paths", str(patch)], cwd=tmp_path, capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    assert (tmp_path / "robot.urdf").read_bytes() == NEW


def test_crlf_and_bom_shown_as_plain_lines() -> None:
    old = b"\xef\xbb\xbf" + OLD.replace(b"\n", b"\r\n")
    new = b"\xef\xbb\xbf" + NEW.replace(b"\n", b"\r\n")
    text = unified_diff("robot.urdf", old, new)
    assert "\r" not in text and "\ufeff" not in text
    assert text == unified_diff("robot.urdf", OLD, NEW)


def test_utf8_text_is_preserved() -> None:
    old = OLD.replace(b"<robot>", "<robot> <!-- Gelenk für Ärmchen -->".encode())
    new = NEW.replace(b"<robot>", "<robot> <!-- Gelenk für Ärmchen -->".encode())
    text = unified_diff("robot.urdf", old.replace(b"l0", b"l00"), new)
    assert "Gelenk für Ärmchen" in text


def test_plain_output_has_no_escape_codes() -> None:
    out = io.StringIO()
    text = unified_diff("robot.urdf", OLD, NEW)
    print_diff(text, out, color=False)
    assert out.getvalue() == text and "\x1b" not in out.getvalue()


def test_color_output_is_highlighted_and_keeps_long_lines() -> None:
    long_new = NEW.replace(b'name="l9"', b'name="' + b"x" * 150 + b'"')
    text = unified_diff("robot.urdf", OLD, long_new)
    out = io.StringIO()
    print_diff(text, out, color=True)
    value = out.getvalue()
    assert "\x1b[" in value  # ANSI SGR escape codes (ECMA-48)
    plain = __import__("re").sub(r"\x1b\[[0-9;]*m", "", value)
    assert plain.splitlines() == text.splitlines()  # nothing wrapped, cropped or padded


def test_plain_path_does_not_import_rich() -> None:
    code = (
        "import io, sys; from linkcheck.report.diff import print_diff, unified_diff;"
        "print_diff(unified_diff('r', b'a\\n', b'b\\n'), io.StringIO(), color=False);"
        "sys.exit(1 if 'rich' in sys.modules else 0)"
    )
    assert subprocess.run([sys.executable, "-c", code]).returncode == 0


def test_caution_says_what_and_why() -> None:
    assert "uniform density" in CAUTION and "CAD" in CAUTION and "hardware" in CAUTION
    assert "\n" not in CAUTION
