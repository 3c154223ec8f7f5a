"""The deferred ``iri`` format checkers (feeler/_lazy_iri.py) judge exactly like the real ones.

References: RFC 3987 (IRIs) section 2.2 grammar, as implemented by ``rfc3987_syntax``; JSON Schema 2020-12
validation 7.3.5 (``iri``, ``iri-reference``); `jsonschema` as the reference validator; and that
``feeler --help`` lists every command without importing it (common practice for fast CLIs).
"""

from __future__ import annotations

import subprocess
import sys

from feeler.cli import COMMANDS, SUMMARIES

PROBE = r"""
import sys, feeler
from jsonschema import Draft202012Validator as V
loaded_early = "rfc3987_syntax.syntax_helpers" in sys.modules
iri = V({"format": "iri"}, format_checker=V.FORMAT_CHECKER)
ref = V({"format": "iri-reference"}, format_checker=V.FORMAT_CHECKER)
print(loaded_early, iri.is_valid("http://ex.ample/\u00fc"), iri.is_valid("not an iri"),
      ref.is_valid("/\u00e4"), ref.is_valid("/a b"), "rfc3987_syntax.syntax_helpers" in sys.modules)
"""


def test_iri_checkers_load_on_first_use_and_judge_alike() -> None:
    out = subprocess.run([sys.executable, "-c", PROBE], capture_output=True, text=True, timeout=120, check=True).stdout.split()
    # Not loaded by importing jsonschema; then RFC 3987: a URI with a non-ASCII path is an IRI, a space is not.
    assert out == ["False", "True", "False", "True", "False", "True"]
    from rfc3987_syntax import is_valid_syntax  # the real module, for the same verdicts side by side

    assert [is_valid_syntax("iri", "http://ex.ample/\u00fc"), is_valid_syntax("iri", "not an iri")] == [True, False]


def test_help_lists_every_command_without_importing_them() -> None:
    assert set(SUMMARIES) == set(COMMANDS)
    code = "import sys; from feeler.cli import run; run(['--help']); print('jsonschema' in sys.modules, 'feeler.check.cli' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, check=True).stdout
    assert out.strip().splitlines()[-1] == "False False"
    for name in COMMANDS:
        assert f"  {name} " in out
