"""optlint.nesting: what is refused before libcst, and the deep-stack call the pipeline runs in.

Facts of the trade (from memory): CPython's tokenizer allows at most 200 nested brackets and says
"too many nested parentheses" beyond; Python's default recursion limit is 1,000 frames.
"""

from __future__ import annotations

import contextvars
import sys

import pytest

from optlint.nesting import MAX_DEPTH, deep_call, refusal


def test_two_hundred_nested_brackets_pass_and_two_hundred_and_one_are_python_s_syntax_error():
    assert refusal("y = " + "(" * 200 + "1" + ")" * 200 + "\n") is None
    r = refusal("y = " + "[" * 201 + "1" + "]" * 201 + "\n")
    assert (r.rule, r.line, r.column, r.message) == ("syntax-error", 1, 4 + 201,
                                                     "file does not parse: too many nested parentheses")


def test_deep_valid_python_is_refused_by_optlint_s_own_limit_at_the_outermost_expression():
    shallow = "x = 1\nweights = a" + ".b" * (MAX_DEPTH - 10) + "\n"
    assert refusal(shallow) is None
    deep = "x = 1\nweights = a" + ".b" * (MAX_DEPTH + 10) + "\n"
    r = refusal(deep)
    assert (r.rule, r.line, r.column) == ("file-error", 2, len("weights = ") + 1)
    assert f"more than {MAX_DEPTH} levels deep" in r.message


def test_nesting_python_s_parser_gives_up_on_is_a_syntax_error():
    r = refusal("y = " + "-" * 100_000 + "a\n")
    assert (r.rule, r.line, r.message) == ("syntax-error", 1,
                                           "file is nested too deeply for Python's own parser; not checked")


def test_other_syntax_errors_are_left_to_libcst():
    assert refusal("def f(:\n") is None


def _recurse(n):
    return 0 if n == 0 else 1 + _recurse(n - 1)


VAR = contextvars.ContextVar("test_var", default="unset")


def test_deep_call_gives_room_keeps_the_context_restores_the_limit_and_reraises():
    limit = sys.getrecursionlimit()
    with pytest.raises(RecursionError):
        _recurse(limit * 5)
    assert deep_call(_recurse, limit * 5) == limit * 5
    assert sys.getrecursionlimit() == limit
    token = VAR.set("caller's")
    try:
        assert deep_call(VAR.get) == "caller's"
    finally:
        VAR.reset(token)
    with pytest.raises(KeyError, match="lost"):
        deep_call({}.__getitem__, "lost")
    assert sys.getrecursionlimit() == limit
