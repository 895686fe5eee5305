"""Reading a YAML case file as a node tree, so that every problem carries its line.

Only safe YAML is read; file size, nesting depth and node count (alias expansion included)
are capped by the named limits in :mod:`auditor.settings`.  :class:`NodeReader` turns nodes
into Python values of the kind wanted, recording a :class:`~auditor.errors.Problem` (file,
key path, line, column) for each value that is not, so that a loader reports every problem
of a file together.
"""
from __future__ import annotations

import difflib
import functools
import math
import re
from pathlib import Path

from . import settings
from .errors import CaseError, LimitError, Problem, one_line


_SURROGATE = re.compile("[\ud800-\udfff]")


class NodeMapping(dict):
    """key -> (key node, value node)"""


@functools.lru_cache(maxsize=1)
def scalar_loader():
    import yaml
    return yaml.SafeLoader("")


class NodeReader:
    """Validates a YAML node tree, collecting problems with key paths and lines."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []
        self.lines: dict[str, int] = {}
        self.texts: dict[str, str] = {}     # key path -> scalar text as written
        self.count = 0

    def problem(self, node, key_path: str, message: str):
        line = node.start_mark.line + 1 if node is not None else None
        col = node.start_mark.column + 1 if node is not None else None
        self.problems.append(Problem(self.file, message, key_path, line, col))

    def note(self, node, key_path: str):
        self.lines[key_path] = node.start_mark.line + 1
        if node.id == "scalar":
            self.texts[key_path] = node.value

    def plain(self, node, key_path: str, depth: int = 0, names: bool = False):
        """Python value of a node (aliases expanded, with the node budget enforced)."""
        import yaml
        self.count += 1
        if self.count > settings.MAX_YAML_NODES:
            raise LimitError(Problem(self.file, f"case file expands to more than {settings.MAX_YAML_NODES} YAML "
                                     "nodes (alias expansion?); refused", key_path, node.start_mark.line + 1))
        if depth > settings.MAX_YAML_DEPTH:
            raise LimitError(Problem(self.file, f"case file nests deeper than {settings.MAX_YAML_DEPTH} levels; refused",
                                     key_path, node.start_mark.line + 1))
        self.note(node, key_path)
        if isinstance(node, yaml.MappingNode):
            out = {}
            for k, v in node.value:
                # keys are names: keep the text as written (YAML 1.1 would turn NO into False)
                key = k.value if isinstance(k, yaml.ScalarNode) else self.plain(k, key_path, depth + 1)
                if not isinstance(key, (str, int, float)):
                    self.problem(k, key_path, "mapping keys must be plain names")
                    continue
                if str(key) in out:
                    self.problem(k, f"{key_path}.{key}".lstrip("."), f"key {key!r} appears twice; keep one")
                    continue
                out[str(key)] = (k, v)
            return NodeMapping(out)
        if isinstance(node, yaml.SequenceNode):
            return [(v, self.plain(v, f"{key_path}[{i}]", depth + 1, names)) for i, v in enumerate(node.value)]
        if isinstance(node, yaml.ScalarNode) and _SURROGATE.search(node.value):
            raise CaseError(Problem(self.file, "this text holds a lone surrogate code point (" +
                                    ascii(_SURROGATE.search(node.value).group())[1:-1] + "), which is not a character; "
                                    "remove it or write the character it stood for", key_path,
                                    node.start_mark.line + 1, node.start_mark.column + 1))
        if names and isinstance(node, yaml.ScalarNode) and node.style is None and node.tag.endswith(":bool"):
            return node.value  # a species called NO, not the YAML 1.1 boolean
        try:
            return scalar_loader().construct_object(node)
        except (ValueError, OverflowError, yaml.YAMLError) as exc:
            # an impossible date, an unknown or python tag, '!!float abc', an integer over 4300 digits
            what = one_line(getattr(exc, "problem", None) or str(exc).split(";")[0], 200)
            raise CaseError(Problem(self.file, f"cannot read this value: {what}", key_path,
                                    node.start_mark.line + 1, node.start_mark.column + 1)) from None

    # ---- values of the wanted kinds; each records the problem and gives None otherwise
    def check_keys(self, mapping: "NodeMapping", allowed, where: str):
        for key, (knode, _) in mapping.items():
            word, _, rest = key.partition(" ")
            if key not in allowed and word in allowed and rest.strip():
                # 'temperature 850 degC' in a flow mapping reads as one key without a value
                self.problem(knode, f"{where}.{word}".lstrip("."),
                             f"a colon is missing after {word!r}: write '{word}: {rest.strip()}'")
            elif key not in allowed:
                self.problem(knode, f"{where}.{key}".lstrip("."), f"unknown key {key!r}{suggest(key, allowed)}")

    @staticmethod
    def get(mapping, key):
        return mapping[key][1] if key in mapping else None

    def value_of(self, node, kp):
        return self.plain(node, kp) if node is not None else None

    def want_str(self, node, kp, what="a name") -> str | None:
        v = self.plain(node, kp, names=True) if node is not None else None
        if (getattr(node, "id", None) == "scalar" and node.style is None and not isinstance(v, (str, bool))
                and v is not None):
            v = node.value  # text that YAML 1.1 reads as a number or a date: 'title: 2024-02-03'

        if not isinstance(v, str) or not v.strip():
            self.problem(node, kp, f"expected {what}, got {kind_of(v)}")
            return None
        return v.strip()

    def want_fraction(self, node, kp, what: str) -> float | None:
        v = self.value_of(node, kp)
        try:
            ok = not isinstance(v, bool) and isinstance(v, (int, float)) and math.isfinite(float(v))
        except OverflowError:
            ok = False
        if not ok:
            self.problem(node, kp, f"expected {what} as a finite number, got {kind_of(v)}")
            return None
        return float(v)

    def want(self, node, kp, kind: type, what: str):
        v = self.value_of(node, kp)
        if not isinstance(v, kind):
            self.problem(node, kp, f"expected {what}, got {kind_of(v)}")
            return None
        return v

    def want_mapping(self, node, kp) -> "NodeMapping | None":
        return self.want(node, kp, NodeMapping, "a mapping (key: value lines)")

    def want_list(self, node, kp) -> list | None:
        return self.want(node, kp, list, "a list")

    def open_fraction(self, node, kp, what: str) -> float | None:
        """A number strictly between 0 and 1 (a mole or phase fraction), or None with the problem recorded."""
        x = self.want_fraction(node, kp, what)
        if x is not None and not 0 < x < 1:
            self.problem(node, kp, f"a specified {what.split(' (')[0].removeprefix('a ')} must lie strictly between "
                         f"0 and 1, got {x:g}")
            return None
        return x


def check_budget(root, file: str) -> None:
    """Refuse a node tree that expands (through aliases) beyond the node budget or nests
    beyond the depth limit, before anything walks it; stops as soon as a limit is hit."""
    import yaml
    stack = [(root, 0)]
    seen = 0
    while stack:
        node, depth = stack.pop()
        seen += 1
        if seen > settings.MAX_YAML_NODES:
            raise LimitError(Problem(file, f"case file expands to more than {settings.MAX_YAML_NODES} YAML nodes "
                                     "(alias expansion?); refused", "", node.start_mark.line + 1))
        if depth > settings.MAX_YAML_DEPTH:
            raise LimitError(Problem(file, f"case file nests deeper than {settings.MAX_YAML_DEPTH} levels; refused",
                                     "", node.start_mark.line + 1))
        if isinstance(node, yaml.MappingNode):
            for k, v in node.value:
                stack.append((k, depth + 1))
                stack.append((v, depth + 1))
        elif isinstance(node, yaml.SequenceNode):
            stack.extend((v, depth + 1) for v in node.value)


def load_nodes(path: Path, text: str | None = None):
    """The root node of a case file, after the size, encoding, syntax and budget checks.
    ``text``: the case's YAML text held in memory (a case given as a mapping); ``path`` then
    only names it in messages."""
    if text is not None:
        return _root_of(path, text.encode("utf-8", "surrogatepass"))
    if path.is_dir():
        raise CaseError(Problem(str(path), "is a directory, not a case file"))
    try:
        # read at most one byte past the limit, whatever stat says (pipes report size 0)
        with open(path, "rb") as fh:
            raw = fh.read(settings.MAX_CASE_FILE_BYTES + 1)
    except OSError as exc:
        raise CaseError(Problem(str(path), f"cannot read case file: {exc.strerror or exc}")) from None
    return _root_of(path, raw)


def _root_of(path: Path, raw: bytes):
    import yaml
    if len(raw) > settings.MAX_CASE_FILE_BYTES:
        raise LimitError(Problem(str(path), f"case file is larger than the limit of "
                                 f"{settings.MAX_CASE_FILE_BYTES} bytes; refused"))
    if b"\x00" in raw:
        raise CaseError(Problem(str(path), "this is a binary file, not a YAML case file"))
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError(Problem(str(path), f"case file is not UTF-8 text (byte {exc.start}): save it as UTF-8")) from None
    if not text.strip():
        raise CaseError(Problem(str(path), "case file is empty; start from 'auditor new PATH'"))
    try:
        docs = list(yaml.compose_all(text, Loader=yaml.SafeLoader))
    except yaml.YAMLError as exc:
        from .yaml_syntax import syntax_problem
        raise CaseError(syntax_problem(str(path), text, exc)) from None
    except RecursionError:
        raise LimitError(Problem(str(path), f"case file nests deeper than {settings.MAX_YAML_DEPTH} levels; "
                                 "refused")) from None
    docs = [d for d in docs if d is not None]
    if not docs:
        raise CaseError(Problem(str(path), "case file is empty (only comments); start from 'auditor new PATH'"))
    if len(docs) != 1:
        raise CaseError(Problem(str(path), f"expected one YAML document, found {len(docs)}"))
    check_budget(docs[0], str(path))
    if not isinstance(docs[0], yaml.MappingNode):
        raise CaseError(Problem(str(path), "a case file is a mapping of keys such as title, system, feed, specified",
                                "", docs[0].start_mark.line + 1))
    return docs[0]


def suggest(word: str, options) -> str:
    hit = ranked(word, options, n=1, cutoff=0.5)
    return f"; did you mean {hit[0]!r}?" if hit else f"; expected one of: {', '.join(options)}"


def ranked(word: str, options, n: int = 4, cutoff: float = 0.6) -> list[str]:
    """Names closest to ``word``, best first (difflib's similarity ratio; letter case counts
    only to break ties, so 'h2o' finds 'H2O' before 'H2')."""
    scored = []
    for o in dict.fromkeys(options):
        folded = difflib.SequenceMatcher(None, word.upper(), o.upper()).ratio()
        if folded >= cutoff:
            scored.append((-folded, -difflib.SequenceMatcher(None, word, o).ratio(), o))
    return [o for *_, o in sorted(scored)[:n]]


def kind_of(v) -> str:
    """How a value is shown in a message: never the YAML structure itself."""
    if isinstance(v, NodeMapping):
        return "a mapping"
    if isinstance(v, list):
        return "a list" if v else "an empty list"
    text = repr(v)
    return text if len(text) <= 80 else f"{text[:60]}... ({len(str(v))} characters)"
