"""Comments point at the code, not at its history: no codes of documents outside the repository.

A reliability scenario is named in words ("inotify queue overflow", "deep HTML"), never by the row
code of a planning document or a finding number. The scan covers every tracked `.py` and `.toml`
file: comments, docstrings, `reason=` strings (xfail and skip marks), test names, and any string
that names the reliability document. Test data, such as a table cell or a section title that
happens to be a letter and a digit, sits in ordinary strings and is not scanned for bare codes.
"""

from __future__ import annotations

import ast
import io
import re
import subprocess
import tokenize
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent

# A row code (a letter and one or two digits, or a range of them) or a two-digit finding number.
BARE_CODE = re.compile(r"\b(?:[WSP]\d{1,2}(?:\s*[-–]\s*[WSP]?\d{1,2})?|F\d{2})\b")
# The planning document by name, in any string or comment.
DOCUMENT_NAME = re.compile(r"\bRELIABILITY\b")
# A test function named after a code: `test_w6_...`, `test_..._p10`.
CODE_IN_TEST_NAME = re.compile(r"(?:^|_)[wsp]\d{1,2}(?:_|$)")

ALLOWED: set[str] = set()
"""Files exempt from the scan (none)."""
ALLOWED_FOLDERS: tuple[str, ...] = ()


def _tracked(*patterns: str) -> list[str]:
    try:
        listed = subprocess.run(
            ["git", "ls-files", "--", *patterns],
            cwd=ROOT,
            capture_output=True,
            text=True,
            check=True,
        ).stdout.split()
    except (OSError, subprocess.CalledProcessError):
        pytest.skip("not a git checkout")
    return [
        name
        for name in listed
        if name not in ALLOWED and not name.startswith(ALLOWED_FOLDERS) and (ROOT / name).is_file()
    ]


def _docstrings(tree: ast.Module) -> list[tuple[int, str]]:
    found: list[tuple[int, str]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Module | ast.ClassDef | ast.FunctionDef | ast.AsyncFunctionDef):
            text = ast.get_docstring(node, clean=False)
            if text is not None:
                first = node.body[0]
                found.append((first.lineno, text))
    return found


def _reasons(tree: ast.Module) -> list[tuple[int, str]]:
    found: list[tuple[int, str]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            for keyword in node.keywords:
                value = keyword.value
                if (
                    keyword.arg == "reason"
                    and isinstance(value, ast.Constant)
                    and isinstance(value.value, str)
                ):
                    found.append((value.lineno, value.value))
    return found


def _python_problems(name: str, source: str) -> list[str]:
    problems: list[str] = []
    tree = ast.parse(source, filename=name)
    comments: list[tuple[int, str]] = [
        (token.start[0], token.string)
        for token in tokenize.generate_tokens(io.StringIO(source).readline)
        if token.type == tokenize.COMMENT
    ]
    prose = comments + _docstrings(tree) + _reasons(tree)
    for line, text in prose:
        for match in BARE_CODE.finditer(text):
            problems.append(f"{name}:{line}: code {match.group()!r} in a comment or docstring")
    for node in ast.walk(tree):
        if (
            isinstance(node, ast.Constant)
            and isinstance(node.value, str)
            and DOCUMENT_NAME.search(node.value)
        ):
            problems.append(f"{name}:{node.lineno}: the reliability document is cited by name")
        if not isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            continue
        if node.name.startswith("test") and CODE_IN_TEST_NAME.search(node.name):
            problems.append(f"{name}:{node.lineno}: test name {node.name!r} carries a code")
    for line, text in comments:  # docstrings and reasons are string constants, checked above
        if DOCUMENT_NAME.search(text):
            problems.append(f"{name}:{line}: the reliability document is cited by name")
    return problems


def _toml_problems(name: str, source: str) -> list[str]:
    problems: list[str] = []
    for number, line in enumerate(source.splitlines(), start=1):
        # A comment starts at the first `#` outside a string; our TOML files quote no `#`.
        _, hash_sign, comment = line.partition("#")
        if not hash_sign:
            continue
        if BARE_CODE.search(comment) or DOCUMENT_NAME.search(comment):
            problems.append(f"{name}:{number}: document code in a comment: {comment.strip()!r}")
    return problems


def test_python_comments_docstrings_and_test_names_carry_no_document_codes() -> None:
    problems: list[str] = []
    for name in _tracked("*.py"):
        problems += _python_problems(name, (ROOT / name).read_text(encoding="utf-8"))
    assert problems == [], "name the scenario in words:\n" + "\n".join(problems)


def test_toml_comments_carry_no_document_codes() -> None:
    problems: list[str] = []
    for name in _tracked("*.toml"):
        problems += _toml_problems(name, (ROOT / name).read_text(encoding="utf-8"))
    assert problems == [], "name the scenario in words:\n" + "\n".join(problems)


def test_the_scan_catches_codes_and_leaves_test_data_alone() -> None:
    code = "W" + "6"
    document = "RELIABI" + "LITY"
    source = (
        f"# inotify queue overflow ({code}, {document})\n"
        f'"""Follows {document}."""\n'
        f"def test_{code.lower()}_overflow() -> None:\n"
        "    cell = 'P1'\n"
        "    section = ['Guide', 'S3']\n"
    )
    problems = _python_problems("example.py", source)
    assert len(problems) == 4, problems  # the comment's code and name, the docstring, the test name
    clean = "# inotify queue overflow\ncell = 'P1'  # a table cell\n"
    assert _python_problems("clean.py", clean) == []
    assert _toml_problems("x.toml", f'a = "1"  # deep HTML ({code})\n') != []
    assert _toml_problems("x.toml", 'a = "1"  # deep HTML\n') == []
