"""The case as the analyst entered it: each input's text as written, read from the case file.

The validated ``Case`` holds SI values; a filed report also shows what was typed (``120 kmol``,
``850 degC``), embeds the file and hashes it. This module reads the case file already on disk
(the input of the audit) with the YAML composer, which keeps every scalar's source text.
It also chooses the amount unit of the report: the feed's own molar unit when every feed
amount is written in the same one (a feed in kmol gives results in kmol), else mol.
"""
from __future__ import annotations

import hashlib
from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class Entered:
    path: str                                # the case path as given on the command line
    text: str                                # the case file's text ("" when it cannot be read again)
    sha256: str
    source: str                              # "packaged", or the mechanism path as written in the file
    feed: tuple[tuple[str, str], ...]        # (species, amount as written)
    specified: tuple[tuple[str, str], ...]   # (key path, value as written)
    restrictions: tuple[str, ...]            # each restriction as written (flow style)
    claims: tuple[tuple[str, str], ...]      # (claim, value as written)
    amount_unit: str                         # unit of amounts in the report
    mol_per_unit: float                      # mol in one amount_unit
    feed_units: tuple[str, ...] = ()         # the units the feed was written in, first use first

    @property
    def unit_is_the_feeds(self) -> bool:
        """Whether every feed amount was written in the report's amount unit."""
        return self.feed_units == (self.amount_unit,)


def _flat(text: str) -> str:
    return " ".join(text.split())


def _snippet(text: str, node) -> str:
    import yaml
    if isinstance(node, yaml.ScalarNode):
        return node.value
    return _flat(text[node.start_mark.index:node.end_mark.index])


def _leaves(text: str, node, prefix: str):
    """(key path, text as written) of every scalar under a mapping node; lists stay whole."""
    import yaml
    if isinstance(node, yaml.MappingNode):
        for k, v in node.value:
            yield from _leaves(text, v, f"{prefix}.{k.value}" if prefix else k.value)
    else:
        yield prefix, _snippet(text, node)


def _declared(written: str, read_as: str | None) -> str:
    if read_as is None or read_as == written:
        return written
    return f"{written} (read as {read_as}, from 'units:')"


def _molar_unit(unit: str) -> float | None:
    """mol per ``unit`` when it is an amount of substance (mol, kmol, lbmol), else None."""
    if unit in ("", "mol"):
        return 1.0
    from ..units import parse
    try:
        return parse(f"1 {unit}", "amount").si
    except ValueError:
        return None


def amount_unit(feed_texts, per: str | None = None) -> tuple[str, float]:
    """(unit, mol per unit) of the report's amounts: the feed's one molar unit, else mol;
    for a feed written as rates per ``per`` (a time unit), a rate (kmol/h as written, else mol/h)."""
    from ..units import split
    units = set()
    for _, t in feed_texts:
        try:
            units.add(split(t, "amount")[2])
        except ValueError:
            units.add(None)
    if len(units) == 1:
        unit = units.pop()
        if unit is not None:
            scale = _molar_unit(unit)
            if scale is not None:
                return unit, scale
    return ("mol", 1.0) if per is None else (f"mol/{per}", 1.0)


def feed_units(feed_texts) -> tuple[str, ...]:
    """The distinct units of the feed as written ("mol" for a bare number), in first-use order."""
    from ..units import split
    out = []
    for _, t in feed_texts:
        try:
            unit = split(t, "amount")[2] or "mol"
        except ValueError:
            continue
        if unit not in out:
            out.append(unit)
    return tuple(out)


def feed_as_written(case) -> list[tuple[str, str]]:
    """(species, amount as written) in file order, from the loader's record of the text."""
    written = [(kp[len("feed."):], t) for kp, t in case.as_written.items() if kp.startswith("feed.")]
    if written or case.feed is None:
        return written
    return [(name, f"{float(a):g} mol") for name, a in case.feed]


def case_amount_unit(case) -> tuple[str, float]:
    """The report's amount unit for ``case`` without reading its file again."""
    return amount_unit(feed_as_written(case), getattr(case, "rate_per", None))


def read(case) -> Entered:
    """What the analyst wrote in ``case.path`` (falls back to the validated values if unreadable)."""
    import yaml
    path = str(case.path)
    try:
        raw = case.text.encode("utf-8") if getattr(case, "text", None) is not None else Path(case.path).read_bytes()
        text = raw.decode("utf-8")
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except (OSError, UnicodeDecodeError, yaml.YAMLError):
        raw, text, root = b"", "", None
    top = {k.value: v for k, v in root.value} if isinstance(root, yaml.MappingNode) else {}
    from ..system import display_source
    source = display_source(case.system.mechanism) if case.system.mechanism is not None else case.system.source
    system = top.get("system")
    if isinstance(system, yaml.MappingNode):
        given = {k.value: v for k, v in system.value}
        node = given.get("mechanism", given.get("source"))
        if isinstance(node, yaml.ScalarNode):
            source = node.value
    feed = feed_as_written(case)
    specified = list(_leaves(text, top["specified"], "")) if isinstance(top.get("specified"), yaml.MappingNode) else []
    # a bare number read in the unit the case declares under 'units:' says so
    specified = [(kp, _declared(t, case.as_written.get(f"specified.{kp}"))) for kp, t in specified]
    restrictions = []
    if isinstance(top.get("restrictions"), yaml.SequenceNode):
        restrictions = [_snippet(text, n) for n in top["restrictions"].value]
    claims = []
    if isinstance(top.get("claims"), yaml.MappingNode):
        claims = [(k.value, _snippet(text, v)) for k, v in top["claims"].value]
    unit, scale = amount_unit(feed, getattr(case, "rate_per", None))
    return Entered(path=path, text=text, sha256=hashlib.sha256(raw).hexdigest() if raw else "",
                   source=source, feed=tuple(feed), specified=tuple(specified), restrictions=tuple(restrictions),
                   claims=tuple(claims), amount_unit=unit, mol_per_unit=scale,
                   feed_units=feed_units(feed))
