"""A mechanism or thermo file is checked before any parser expands it.

The same kind of guard as the case file's (``yaml_nodes``): what the file is (a regular
file, not a directory, a named pipe, a device or a symbolic-link loop), its size, how deeply
it nests, how many YAML nodes it expands to once its aliases are followed, and how many
species and reactions it declares, each against a named limit of ``settings``.  The checks
read the text once with regular expressions, so a legitimate large mechanism pays a few
tens of milliseconds; only a file that defines anchors *and* refers to them is composed (by
the pure-Python YAML composer, which never expands an alias) and counted.
"""
from __future__ import annotations

import errno
import os
import re
import stat
from pathlib import Path

from .. import settings
from ..errors import MechanismError

_NOT_BRACKET = re.compile(r"[^\[\]{}]+")
_DASH_NESTING = re.compile(r"^[ \t]*(?:-[ \t]+){%d}" % (settings.MAX_MECHANISM_DEPTH + 1), re.M)
_DEEP_INDENT = re.compile(r"^ {%d,}(?:- |[A-Za-z_\"'][^:\n]*:)" % settings.MAX_MECHANISM_INDENT, re.M)
_ANCHOR = re.compile(r"&([A-Za-z0-9_][\w.-]*)")     # an anchor follows a space, a line start or [{,:-
_ENTRY = re.compile(r"^[ \t]*-[ \t]+(name|equation)[ \t]*:", re.M)
# YAML 1.1's not-a-number and infinity (.nan, -.inf, ...) as a plain value
_NOT_FINITE = re.compile(r"(?<![\w.'\"])([-+]?\.(?:nan|NaN|NAN|inf|Inf|INF))(?![\w.'\"])")


def _raise_it(setting: str) -> str:
    return f"(settings.{setting}; raise it there for a larger file)"


def checked_stat(path: Path, what: str = "mechanism file") -> os.stat_result:
    """The file's status, when it is a regular file that can be read; otherwise one clear
    error saying what it is (never an attempt to read a pipe or a device)."""
    try:
        st = path.stat()
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise MechanismError.single(path, f"{what} is a symbolic-link loop") from None
        if exc.errno in (errno.ENOENT, errno.ENOTDIR):
            raise MechanismError.single(path, f"{what} not found") from None
        raise MechanismError.single(path, f"cannot read {what}: {exc.strerror}") from None
    mode = st.st_mode
    kinds = ((stat.S_ISDIR, "a directory"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
             (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket"))
    for test, words in kinds:
        if test(mode):
            raise MechanismError.single(path, f"{what} is {words}, not a file; name a Cantera-format YAML file")
    if not stat.S_ISREG(mode):
        raise MechanismError.single(path, f"{what} is not a regular file")
    if st.st_size > settings.MAX_MECHANISM_FILE_BYTES:
        raise MechanismError.single(path, f"{what} is {st.st_size:,} bytes, above the limit of "
                                          f"{settings.MAX_MECHANISM_FILE_BYTES:,} {_raise_it('MAX_MECHANISM_FILE_BYTES')}; "
                                          "refused")
    return st


def check_text(path: Path, text: str, what: str = "mechanism file") -> None:
    """Nesting, alias expansion, species and reaction counts of a file's text, each against
    its limit; one error naming the limit when one is exceeded."""
    def refuse(message: str):
        raise MechanismError.single(path, f"{what} {message}; refused")

    depth = settings.MAX_MECHANISM_DEPTH
    deep_indent = " " * settings.MAX_MECHANISM_INDENT in text and _DEEP_INDENT.search(text)   # substring first: fast
    if _flow_depth(text) > depth or _DASH_NESTING.search(text) or deep_indent:
        refuse(f"nests deeper than {depth} levels {_raise_it('MAX_MECHANISM_DEPTH')}")
    entries = _ENTRY.findall(text)          # one pass: the keys of every list entry named or an equation
    n_species = entries.count("name")
    if n_species > settings.MAX_MECHANISM_SPECIES:
        refuse(f"declares about {n_species:,} species (and phases), above the limit of "
               f"{settings.MAX_MECHANISM_SPECIES:,} {_raise_it('MAX_MECHANISM_SPECIES')}")
    n_reactions = len(entries) - n_species
    if n_reactions > settings.MAX_MECHANISM_REACTIONS:
        refuse(f"declares {n_reactions:,} reactions, above the limit of {settings.MAX_MECHANISM_REACTIONS:,} "
               f"{_raise_it('MAX_MECHANISM_REACTIONS')}")
    _check_finite(path, text, what)
    anchors = {m.group(1) for m in _ANCHOR.finditer(text) if m.start() == 0 or text[m.start() - 1] in " \t\r\n[{,:-"} \
        if "&" in text and "*" in text else ()
    if anchors and any(re.search(r"\*" + re.escape(a) + r"(?![\w.-])", text) for a in anchors):
        _check_aliases(text, refuse)


def _check_finite(path: Path, text: str, what: str) -> None:
    """A NaN or an infinity written among the file's numbers (thermo data, rate parameters) is
    named as such, with its line (cantera would report a type mismatch)."""
    if ".nan" not in text.lower() and ".inf" not in text.lower():
        return
    for number, line in enumerate(text.splitlines(), start=1):
        m = _NOT_FINITE.search(line.split("#", 1)[0])
        if m:
            kind = "not a number (NaN)" if "nan" in m.group(1).lower() else "an infinity"
            raise MechanismError.single(path, f"{what} holds {kind}, written {m.group(1)}, where a number belongs "
                                              "(thermo data and parameters must be finite numbers)", line=number)


def _flow_depth(text: str) -> int:
    """Deepest nesting of flow brackets (``[`` and ``{``), from the brackets alone (a running
    sum of +1 per opening and -1 per closing bracket)."""
    import numpy as np
    brackets = np.frombuffer(_NOT_BRACKET.sub("", text).encode("ascii"), dtype=np.uint8)
    if not brackets.size:
        return 0
    steps = np.where((brackets == ord("[")) | (brackets == ord("{")), 1, -1)
    return int(np.cumsum(steps).max())


def _check_aliases(text: str, refuse) -> None:
    """Compose the YAML (aliases stay shared nodes) and count the nodes it expands to, each
    shared node once per reference, without building the expansion."""
    if len(text) > settings.MAX_ALIASED_MECHANISM_BYTES:
        refuse(f"uses YAML aliases and is larger than {settings.MAX_ALIASED_MECHANISM_BYTES:,} bytes, so its "
               f"expansion is not checked {_raise_it('MAX_ALIASED_MECHANISM_BYTES')}")
    import yaml
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except RecursionError:
        refuse(f"nests deeper than the YAML reader can follow {_raise_it('MAX_MECHANISM_DEPTH')}")
    except yaml.YAMLError:
        return      # a syntax error: the reader that follows says where
    sizes: dict[int, tuple[int, int]] = {}
    limit = settings.MAX_MECHANISM_NODES

    def measure(node, level: int) -> tuple[int, int]:
        """(nodes after expansion, depth) of a node, each shared node computed once."""
        if level > settings.MAX_MECHANISM_DEPTH:
            refuse(f"nests deeper than {settings.MAX_MECHANISM_DEPTH} levels {_raise_it('MAX_MECHANISM_DEPTH')}")
        got = sizes.get(id(node))
        if got is None:
            children = node.value if isinstance(node, yaml.SequenceNode) else \
                [x for kv in node.value for x in kv] if isinstance(node, yaml.MappingNode) else ()
            count, deep = 1, 0
            for child in children:
                c, d = measure(child, level + 1)
                count, deep = count + c, max(deep, d + 1)
                if count > limit:
                    refuse(f"expands to more than {limit:,} YAML nodes once its aliases are followed (an alias "
                           f"bomb?) {_raise_it('MAX_MECHANISM_NODES')}")
            got = sizes[id(node)] = (count, deep)
        if level + got[1] > settings.MAX_MECHANISM_DEPTH:
            refuse(f"nests deeper than {settings.MAX_MECHANISM_DEPTH} levels {_raise_it('MAX_MECHANISM_DEPTH')}")
        return got

    if root is not None:
        measure(root, 0)
