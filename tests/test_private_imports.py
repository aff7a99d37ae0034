"""No module of enumerator borrows another module's private (underscore) names.

A helper two modules share gets a public name in the module that owns it (a
numpydoc docstring, listed in ``__all__``), or moves to the module that should
own it.  The rule is read off every module's source with ``ast`` by the
``private_borrowings`` fixture (tests/conftest.py): ``from <module> import
_name`` at any depth of the file, and ``<module>._name`` on a name an import
bound to one of the package's modules.
"""

from __future__ import annotations

from pathlib import Path

import enumerator

ROOT = Path(enumerator.__file__).parent

# Borrowings still allowed, each ``(importer, home module, name)``.  They sit in
# files other work was rewriting when this test was written; to remove one, make
# the name public in its home module (or move it to its owner), update the
# importer and delete the entry here.  The list may only shrink: the second test
# fails on an entry whose borrowing is gone.
ALLOWED = {
    # laws.py routes statistics by groups through group_laws.py's private helpers
    ("enumerator/algorithms/laws.py", "enumerator.algorithms.group_laws", "_group_marked_law"),
    ("enumerator/algorithms/laws.py", "enumerator.algorithms.group_laws", "_group_max_counts"),
    ("enumerator/algorithms/laws.py", "enumerator.algorithms.group_laws", "_group_min_counts"),
    ("enumerator/algorithms/laws.py", "enumerator.algorithms.group_laws", "_group_urn_counts"),
    ("enumerator/algorithms/laws.py", "enumerator.algorithms.group_laws", "_mb_max_cost"),
}


def test_no_module_borrows_a_private_name_of_another(private_borrowings):
    assert sorted(set(private_borrowings(ROOT)) - ALLOWED) == []


def test_every_allowed_borrowing_is_still_there(private_borrowings):
    # an entry whose borrowing has gone is stale: delete it, so the list only shrinks
    assert sorted(ALLOWED - set(private_borrowings(ROOT))) == []


def test_the_reader_finds_each_way_of_borrowing(private_borrowings, tmp_path):
    # a hand-written package whose borrowings are known by construction: one way per file
    files = {
        "__init__.py": "",
        "a.py": "_x = 1\nx = 2\n\ndef _f():\n    return 3\n",
        "sub/__init__.py": "",
        "sub/c.py": "from . import c\n_own = 1\nvalue = c._own\n",  # its own private name: allowed
        "sub/relative.py": "from ..a import _f, x\n",
        "sub/absolute.py": "from pkg.a import _x as y\n",
        "sub/attribute.py": "from .. import a\n\ndef g():\n    return a._x\n",
        "sub/aliased.py": "import pkg.a as mod\nmod._f()\n",
        "sub/dotted.py": "import pkg\nvalue = pkg.sub.c._own\n",
        "sub/nested.py": "def g():\n    from .c import _own\n    return _own\n",
        # none of these borrows: another package's names, a dunder, a private alias
        # of a public name, attributes of objects that are not package modules
        "sub/clean.py": (
            "from os import _exit\nfrom ..a import __doc__\nfrom ..a import x as _x\n"
            "import numpy as np\nimport pkg.a\nvalue = np._x, pkg.a.x, _x._y\n"
        ),
    }
    root = tmp_path / "pkg"
    for name, text in files.items():
        (root / name).parent.mkdir(parents=True, exist_ok=True)
        (root / name).write_text(text, encoding="utf-8")
    assert private_borrowings(root) == [
        ("pkg/sub/absolute.py", "pkg.a", "_x"),
        ("pkg/sub/aliased.py", "pkg.a", "_f"),
        ("pkg/sub/attribute.py", "pkg.a", "_x"),
        ("pkg/sub/dotted.py", "pkg.sub.c", "_own"),
        ("pkg/sub/nested.py", "pkg.sub.c", "_own"),
        ("pkg/sub/relative.py", "pkg.a", "_f"),
    ]
    # a selection of files reads only those
    assert private_borrowings(root, [root / "sub" / "relative.py", root / "sub" / "clean.py"]) == [
        ("pkg/sub/relative.py", "pkg.a", "_f"),
    ]
