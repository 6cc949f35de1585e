"""Load a layout file: YAML with positions, schema checks, parts, beamlines.

Every problem is collected and raised at once as a
:class:`~beamplan.errors.LayoutError`. Graph checks (fan-in, cycles,
reachability) come later, with the network.
"""

from __future__ import annotations

import hashlib
import itertools
from typing import Any

from beamplan.errors import Diagnostic, LayoutError, Location, did_you_mean, excerpt
from beamplan.layout.endpoints import entries, read_scanners, read_sources
from beamplan.layout.kinds import read_element
from beamplan.layout.limits import STANDARD, Limits
from beamplan.layout.model import (
    ElementSpec,
    Layout,
    LinkSpec,
    SplitterSpec,
)
from beamplan.layout.reader import ID_PATTERN, MISSING, Context, MapReader
from beamplan.layout.spec import SECTIONS
from beamplan.layout.yamlpos import Path, YamlDocument, load_yaml

__all__ = ["FORMAT_VERSION", "load_layout", "parse_layout"]

FORMAT_VERSION = 1
DEFAULT_WAVELENGTH_M = 13.5e-9


def _section(ctx: Context, top: MapReader, key: str, required: bool) -> dict[str, Any]:
    value = top.mapping(key, required=required)
    if value is None:
        return {}
    if required and not value:
        ctx.error("empty-section", f"section '{key}' is empty", top.key_loc(key),
                  f"add at least one entry under '{key}:'")
    return value


def _read_elements(ctx: Context, section: dict[str, Any], parts: dict[str, Any]
                   ) -> tuple[list[ElementSpec], set[str]]:
    used_parts: set[str] = set()
    out: list[ElementSpec] = []
    for eid, settings, path in entries(ctx, section, "elements", "element",
                                         "{kind: mirror, reflectivity: 0.9}"):
        merged: dict[str, Any] = {}
        paths: dict[str, Path] = {}
        part = settings.get("part")
        subject = f"element '{eid}'"
        if part is not None:
            part = str(part)
            template = parts.get(part)
            if part in parts and not isinstance(template, dict):
                ctx.error("bad-type", f"part '{part}' must be a mapping of element settings, "
                          f"got {excerpt(template)}", ctx.positions.value(("parts", part)),
                          "e.g. '{kind: mirror, reflectivity: 0.95}'")
                continue
            if not isinstance(template, dict):
                hint = did_you_mean(part, parts) or (
                    f"the parts are: {', '.join(parts)}" if parts else "define it under 'parts:'")
                ctx.error("unknown-part", f"{subject}: unknown part '{part}'",
                          ctx.positions.value((*path, "part")), hint)
                continue
            used_parts.add(part)
            subject = f"element '{eid}' (part '{part}')"
            for key, value in template.items():
                merged[key] = value
                paths[key] = ("parts", part, key)
        for key, value in settings.items():
            merged[key] = value
            paths[key] = (*path, key)
        spec = read_element(MapReader(ctx, merged, paths, subject, path), eid, part)
        if spec is not None:
            out.append(spec)
    return out, used_parts


def _token_column(doc_lines: list[str], loc: Location) -> int:
    """Column offset of a scalar's text: 1 when the scalar is quoted."""
    if 0 < loc.line <= len(doc_lines):
        line = doc_lines[loc.line - 1]
        if loc.column - 1 < len(line) and line[loc.column - 1] in "\"'":
            return 1
    return 0


def _read_beamlines(ctx: Context, top: MapReader, lines: list[str]) -> list[LinkSpec]:
    value = top.raw("beamlines", required=True, example="['fel-1 -> m1 -> litho-01']")
    if value is MISSING:
        return []
    if not isinstance(value, list) or not value:
        what = "is empty" if isinstance(value, list) else f"must be a list, got {excerpt(value)}"
        ctx.error("bad-type", f"'beamlines' {what}: give a list of chains such as "
                  "'fel-1 -> m1 -> litho-01'", top.value_loc("beamlines"),
                  "write each chain on its own line starting with '- '")
        return []
    links: list[LinkSpec] = []
    for index, chain in enumerate(value):
        loc = ctx.positions.value(("beamlines", index))
        if not isinstance(chain, str) or "->" not in chain:
            ctx.error("bad-beamline", f"beamline {index + 1} must be a chain of ids joined by "
                      f"'->', got {excerpt(chain)}", loc, "e.g. 'fel-1 -> m1 -> litho-01'")
            continue
        start = loc.column + _token_column(lines, loc)
        tokens: list[tuple[str, Location]] = []
        offset = 0
        for raw in chain.split("->"):
            stripped = raw.strip()
            lead = len(raw) - len(raw.lstrip())
            tokens.append((stripped, Location(loc.file, loc.line, start + offset + lead)))
            offset += len(raw) + 2
        good = True
        for text, tloc in tokens:
            bare = text.split(".")
            if not text or len(bare) > 2 or not all(ID_PATTERN.match(b) for b in bare):
                ctx.error("bad-beamline", f"beamline {index + 1}: {excerpt(text)} is not an id "
                          "or id.output", tloc, "ids hold letters, digits, '-' and '_'")
                good = False
        if not good:
            continue
        for (tail_text, tail_loc), (head_text, head_loc) in itertools.pairwise(tokens):
            tail, _, port = tail_text.partition(".")
            head, _, head_port = head_text.partition(".")
            if head_port and (head_text, head_loc) == tokens[-1]:
                ctx.error("port-at-end", f"beamline {index + 1}: '{head_text}' ends the chain "
                          "with an output name", head_loc.shifted(len(head) + 1),
                          f"continue the chain from '{head_text}' or write '{head}'")
            links.append(LinkSpec(tail, head, port or None, tail_loc, head_loc))
    return links


def _check_links(ctx: Context, links: list[LinkSpec], items: dict[str, Any]) -> None:
    reported: set[Location] = set()
    for link in links:
        for end, loc in ((link.tail, link.tail_location), (link.head, link.head_location)):
            if end not in items and loc not in reported:
                reported.add(loc)
                hint = did_you_mean(end, items) or "define it under sources, elements or scanners"
                ctx.error("unknown-id", f"beamline link {link.label}: unknown id '{end}'", loc,
                          hint)
        tail = items.get(link.tail)
        if link.port is not None and tail is not None:
            if not isinstance(tail, SplitterSpec):
                ctx.error("bad-port", f"beamline link {link.label}: '{link.tail}' has no named "
                          "outputs", link.tail_location,
                          f"only splitters have named outputs; write '{link.tail}'")
            elif link.port not in tail.output_ports:
                names = [str(p) for p in tail.output_ports]
                hint = did_you_mean(link.port, names) or f"its outputs are: {', '.join(names)}"
                ctx.error("bad-port", f"beamline link {link.label}: splitter '{link.tail}' has "
                          f"no output '{link.port}'", link.tail_location, hint)
        elif link.port is None and isinstance(tail, SplitterSpec):
            choices = ", ".join(f"{tail.id}.{p}" for p in tail.output_ports)
            ctx.error("missing-port", f"beamline link {link.label}: splitter '{tail.id}' has "
                      "several outputs; name the one this link leaves by", link.tail_location,
                      f"write one of {choices}")


def parse_layout(doc: YamlDocument) -> Layout:
    """Validate a parsed YAML document as a layout (schema level).

    Raises
    ------
    LayoutError
        With every problem found, located.

    Examples
    --------
    >>> text = '''
    ... layout: tiny
    ... format: 1
    ... sources: {src: {power: 1 kW}}
    ... elements: {m1: {kind: mirror, reflectivity: 0.9}}
    ... scanners: {s1: {power: 300 W}}
    ... beamlines: ["src -> m1 -> s1"]
    ... '''
    >>> from beamplan.layout.yamlpos import parse_yaml
    >>> lay = parse_layout(parse_yaml(text, "tiny.yaml"))
    >>> [link.label for link in lay.links]
    ['src -> m1', 'm1 -> s1']
    """
    ctx = Context(doc.positions)
    if not isinstance(doc.data, dict):
        raise LayoutError([_top_error(doc)])
    top = MapReader(ctx, doc.data, {k: (k,) for k in doc.data}, "layout", ())
    name = top.text("layout", required=True)
    fmt = top.integer("format", default=-1)
    given_int = isinstance(doc.data.get("format"), int) and not isinstance(
        doc.data.get("format"), bool)
    if fmt != FORMAT_VERSION and (given_int or "format" not in doc.data):
        shown = "missing" if fmt == -1 else f"{fmt}"
        ctx.error("bad-format", f"layout 'format' is {shown}; this beamplan reads format "
                  f"{FORMAT_VERSION}", top.value_loc("format"), f"write 'format: {FORMAT_VERSION}'")
    wavelength = top.quantity("wavelength", "length", default=DEFAULT_WAVELENGTH_M,
                              minimum=0.0, strict_minimum=True)
    note = top.text("note")
    sources = read_sources(ctx, _section(ctx, top, "sources", True))
    parts = _section(ctx, top, "parts", False)
    elements, used_parts = _read_elements(ctx, _section(ctx, top, "elements", False), parts)
    profiles = _section(ctx, top, "profiles", False)
    scanners, used_profiles = read_scanners(ctx, _section(ctx, top, "scanners", True), profiles)
    links = _read_beamlines(ctx, top, doc.text.splitlines())
    top.raw("tolerances")  # read by beamplan.layout.tolerances
    top.raw("economics")  # read by beamplan.layout.economics (cost, availability)
    top.raw("ageing")  # an optional ageing section, read by layout/ageing.py
    top.finish(table=SECTIONS["top"])
    for part in parts:
        if part not in used_parts:
            ctx.warning("unused-part", f"part '{part}' is not used by any element",
                        ctx.positions.key(("parts", part)), "remove it or use it")
    for profile in profiles:
        if profile not in used_profiles:
            ctx.warning("unused-profile", f"profile '{profile}' is not used by any scanner",
                        ctx.positions.key(("profiles", profile)), "remove it or use it")
    items: dict[str, Any] = {}
    for section, group in (("sources", sources), ("elements", elements),
                           ("scanners", scanners)):
        for item in group:
            if item.id in items:
                ctx.error("duplicate-id", f"id '{item.id}' is used twice (also in another "
                          "section)", ctx.positions.key((section, item.id)),
                          "give every source, element and scanner its own id")
            items[item.id] = item
    # Ids of entries that failed their own checks still exist for link checks.
    for section in ("sources", "elements", "scanners"):
        given = doc.data.get(section)
        for key in given if isinstance(given, dict) else {}:
            if str(key) not in items and not ctx.failed:  # a reader gave up silently
                ctx.error("bad-value", f"{section[:-1]} '{key}' cannot be read",
                          ctx.positions.key((section, str(key))), "check its keys")
            items.setdefault(str(key), None)
    _check_links(ctx, links, items)
    if ctx.failed:
        raise LayoutError(ctx.diagnostics)
    return Layout(name=name, file=doc.positions.file, wavelength_m=wavelength or 0.0,
                  sources=tuple(sources), elements=tuple(elements), scanners=tuple(scanners),
                  links=tuple(links), format=fmt, note=note,
                  sha256=hashlib.sha256(doc.text.encode("utf-8")).hexdigest(),
                  warnings=tuple(ctx.diagnostics))


def _top_error(doc: YamlDocument) -> Diagnostic:
    return Diagnostic("error", "bad-type", "a layout file must be a mapping with keys such as "
                      "'layout:', 'sources:', 'scanners:' and 'beamlines:'",
                      doc.positions.value(()), "see docs/layout-format.md")


def load_layout(path: str, limits: Limits = STANDARD) -> Layout:
    """Load and validate a layout file (schema level), within ``limits``.

    Examples
    --------
    >>> lay = load_layout("layouts/pilot-line.yaml")
    >>> lay.name
    'pilot-line'
    """
    return parse_layout(load_yaml(path, limits))
