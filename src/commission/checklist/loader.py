"""Load and validate a checklist, with problems that name file, line and item.

Every problem is reported, not just the first: ``FILE:LINE: ITEM-ID: message``,
with ``-`` where a problem belongs to no item. YAML is read with the safe loader
(no object construction).
"""

from __future__ import annotations

import hashlib
from collections import OrderedDict
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Protocol

import yaml

from ..errors import UserError
from .model import Checklist, Item


class CheckInfo(Protocol):
    """What the loader needs to know of a named check (``checks.registry.CheckDef`` is one).
    The checklist package never imports the checks: callers hand it their registry."""

    kinds: tuple[str, ...]
    quantities: tuple[str, ...]
    inputs: Mapping[str, Any]  # name → object with .doc and .required
    params: Mapping[str, Any]  # name → object with .default


Registry = Mapping[str, CheckInfo]


@dataclass(frozen=True)
class Problem:
    file: str
    line: int
    item: str
    message: str

    def __post_init__(self) -> None:
        # One line per problem, whatever the file holds: an id or key with a line break
        # or another control character in it is shown escaped.
        for name in ("item", "message"):
            text = getattr(self, name)
            if not text.isprintable():
                object.__setattr__(self, name, "".join(
                    c if c.isprintable() else repr(c)[1:-1] for c in text))

    def __str__(self) -> str:
        return f"{self.file}:{self.line}: {self.item}: {self.message}"


class ChecklistError(UserError):
    def __init__(self, problems: list[Problem]):
        self.problems = problems
        super().__init__("\n".join(str(p) for p in problems))


@dataclass(frozen=True)
class Loaded:
    checklist: Checklist
    text: str
    sha256: str
    name: str


Path_ = tuple[Any, ...]
# libyaml's composer when PyYAML has it (several times faster on a 600-line checklist);
# the nodes, marks and errors are the same classes. Either way nothing is constructed here.
_COMPOSER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


class _Tree:
    """Plain Python data from YAML nodes, remembering the line of every path."""

    def __init__(self) -> None:
        self.lines: dict[Path_, int] = {}
        self.duplicates: list[tuple[Path_, str, int]] = []
        self._constructor = yaml.SafeLoader("")

    def build(self, node: yaml.Node, path: Path_ = ()) -> Any:
        self.lines[path] = node.start_mark.line + 1
        if isinstance(node, yaml.MappingNode):
            out: dict[Any, Any] = {}
            for key_node, value_node in node.value:
                key = self._construct(key_node)
                if not isinstance(key, str | int | float | bool) or key is None:
                    key = str(key)
                if key in out:
                    self.duplicates.append((path, str(key), key_node.start_mark.line + 1))
                self.lines[(*path, key)] = key_node.start_mark.line + 1
                out[key] = self.build(value_node, (*path, key))
                self.lines[(*path, key)] = key_node.start_mark.line + 1
            return out
        if isinstance(node, yaml.SequenceNode):
            return [self.build(child, (*path, n)) for n, child in enumerate(node.value)]
        return self._construct(node)

    def _construct(self, node: yaml.Node) -> Any:
        try:
            return self._constructor.construct_object(node, deep=True)
        except yaml.YAMLError:
            raise
        except Exception as exc:  # noqa: BLE001 — e.g. "!!int x": the tag's own parser fails
            raise yaml.constructor.ConstructorError(
                None, None, f"{node.tag.removeprefix('tag:yaml.org,2002:')} value "
                f"{node.value!r:.40} cannot be read ({type(exc).__name__}: {exc})",
                node.start_mark) from None

    def line(self, path: Path_) -> int:
        path = tuple(path)
        while path and path not in self.lines:
            path = path[:-1]
        return self.lines.get(path, 1)


def _item_id(data: Any, path: Path_) -> str:
    """The id of the item a path points into, or '-'."""
    if len(path) >= 4 and path[0] == "sections" and path[2] == "items":
        try:
            item_id = data["sections"][path[1]]["items"][path[3]].get("id")
        except (KeyError, IndexError, TypeError, AttributeError):
            return "-"
        return str(item_id) if item_id else f"(item {path[3] + 1} of section {path[1] + 1})"
    return "-"


def _message(err: dict[str, Any]) -> str:
    loc = [str(p) for p in err["loc"] if not isinstance(p, int)]
    field = loc[-1] if loc else ""
    kind = err["type"]
    if kind == "extra_forbidden":
        return f"unknown key '{field}'"
    if kind == "missing":
        return f"missing key '{field}'"
    if kind == "literal_error" and field == "kind":
        return (f"unknown kind {err.get('input')!r} "
                "(accepted: confirm, reading, choice, text, file, photo)")
    msg = err["msg"].removeprefix("Value error, ")
    if field and field not in ("items", "sections"):
        given = err.get("input")
        shown = f" (got {given!r})" if isinstance(given, str | int | float | bool) else ""
        return f"{field}: {msg}{shown}"
    return msg


_FIELD_HINTS = (("unit '", "unit"), ("unknown quantity", "quantity"), ("a choice", "options"),
                ("options must", "options"), ("'quantity'", "quantity"), ("'unit'", "unit"),
                ("'accept'", "accept"), ("'measured'", "measured"), ("aliases", "aliases"),
                ("'options' and", "options"), ("'options'", "options"))


def _refine(loc: Path_, err: dict[str, Any]) -> Path_:
    """Point an item-level rule (from a model validator) at the key it is about."""
    if err["type"] != "value_error":
        return loc
    msg = err["msg"].removeprefix("Value error, ")
    for start, key in _FIELD_HINTS:
        if msg.startswith(start) or f" {start}" in msg[:40]:
            return (*loc, key)
    return loc


# Aliases make a YAML file a graph: a few lines can stand for billions of nodes
# ("billion laughs"). Before anything is built, the composed graph is measured with each
# node counted once per reference (memoised, so measuring is linear in the file), and
# refused beyond these bounds. A real checklist has no aliases and a few thousand nodes.
MAX_ALIASES = 200
MAX_NODES = 200_000
MAX_NESTING = 64


def _measure(root: yaml.Node, name: str) -> None:
    sizes: dict[int, int] = {}
    open_: set[int] = set()
    aliases = 0

    def refuse(node: yaml.Node, what: str) -> ChecklistError:
        return ChecklistError([Problem(name, node.start_mark.line + 1, "-", what)])

    def size(node: yaml.Node, depth: int) -> int:
        nonlocal aliases
        key = id(node)
        if key in sizes:
            aliases += 1
            if aliases > MAX_ALIASES:
                raise refuse(node, f"more than {MAX_ALIASES} YAML alias uses (refused: "
                             "a checklist needs none)")
            return sizes[key]
        if key in open_:
            raise refuse(node, "a YAML alias refers to the node that contains it (refused)")
        if depth > MAX_NESTING:
            raise refuse(node, f"nested more than {MAX_NESTING} levels deep (refused)")
        total = 1
        if isinstance(node, yaml.SequenceNode | yaml.MappingNode):
            open_.add(key)
            children = node.value if isinstance(node, yaml.SequenceNode) else \
                [n for pair in node.value for n in pair]
            for child in children:
                total += size(child, depth + 1)
                if total > MAX_NODES:
                    raise refuse(node, f"expands to more than {MAX_NODES} YAML nodes through "
                                 "aliases (refused)")
            open_.discard(key)
        sizes[key] = total
        return total

    size(root, 0)


# Checklists already validated in this process, by (text, name, strict, registry): a job's
# stored text is parsed each time the job is opened, and an included checklist once per
# section it lends (a three-phase checklist read its single-phase one six times). The
# result is a frozen model, so it is shared. Only successes are kept, a few at a time,
# each with its registry (the key holds the registry's id, so the registry is kept alive).
_PARSED: OrderedDict[tuple[str, str, bool, int], tuple[Registry, Loaded]] = OrderedDict()
_PARSED_MAX = 16


def parse(text: str, name: str, *, checks: Registry, strict: bool = False) -> Loaded:
    """Validate checklist text; raise ChecklistError listing every problem.

    ``checks`` is the registry of named checks the items may use. ``strict`` adds the rules
    for checklists in use from now on (a file given to ``new`` or ``validate``): every
    critical measured reading has a check. A job's stored checklist text is parsed without
    them, so jobs started on an older checklist keep opening."""
    key = (text, name, strict, id(checks))
    hit = _PARSED.get(key)
    if hit is not None and hit[0] is checks:
        _PARSED.move_to_end(key)
        return hit[1]
    loaded = _parse(text, name, checks=checks, strict=strict)
    _PARSED[key] = (checks, loaded)
    while len(_PARSED) > _PARSED_MAX:
        _PARSED.popitem(last=False)
    return loaded


def _parse(text: str, name: str, *, checks: Registry, strict: bool) -> Loaded:
    from pydantic import ValidationError

    problems: list[Problem] = []
    try:
        root = yaml.compose(text, Loader=_COMPOSER)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
        line = mark.line + 1 if mark else 1
        what = getattr(exc, "problem", None) or str(exc).splitlines()[0]
        raise ChecklistError([Problem(name, line, "-", f"YAML syntax: {what}")]) from None
    if root is None:
        raise ChecklistError([Problem(name, 1, "-", "empty file: a checklist needs id, title, "
                                      "version, rules and sections")])
    _measure(root, name)
    tree = _Tree()
    try:
        data = tree.build(root)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        what = " ".join(str(getattr(exc, "problem", None) or exc).split())
        raise ChecklistError([Problem(name, mark.line + 1 if mark else 1, "-",
                                      f"YAML: {what}")]) from None
    if not isinstance(data, dict):
        raise ChecklistError([Problem(name, 1, "-", "a checklist is a mapping with id, title, "
                                      "version, rules and sections")])
    for path, key, line in tree.duplicates:
        problems.append(Problem(name, line, _item_id(data, path), f"duplicate key '{key}'"))
    sections = data.get("sections")
    if isinstance(sections, list) and any(isinstance(s, dict) and "include" in s
                                          for s in sections):
        n = next(k for k, s in enumerate(sections) if isinstance(s, dict) and "include" in s)
        raise ChecklistError([Problem(name, tree.line(("sections", n)), "-",
                                      "included sections are resolved when a checklist file "
                                      "is loaded; this text must hold them itself")])

    try:
        checklist = Checklist.model_validate(data)
    except ValidationError as exc:
        for err in exc.errors():
            loc = _refine(tuple(err["loc"]), err)
            problems.append(Problem(name, tree.line(loc), _item_id(data, loc), _message(err)))
        problems.sort(key=lambda p: p.line)
        raise ChecklistError(problems) from None

    problems += _cross_check(checklist, tree, name, checks, strict)
    if problems:
        problems.sort(key=lambda p: p.line)
        raise ChecklistError(problems)
    digest = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return Loaded(checklist, text, digest, name)


def _cross_check(checklist: Checklist, tree: _Tree, name: str, checks: Registry,
                 strict: bool) -> list[Problem]:
    """What pydantic cannot see: ids, references between items, check signatures."""
    problems: list[Problem] = []
    seen: dict[str, int] = {}
    positions: dict[str, Path_] = {}
    for s_n, section in enumerate(checklist.sections):
        for i_n, item in enumerate(section.items):
            path = ("sections", s_n, "items", i_n)
            if item.id in seen:
                problems.append(Problem(name, tree.line((*path, "id")), item.id,
                                        f"duplicate id (first at line {seen[item.id]})"))
            else:
                seen[item.id] = tree.line((*path, "id"))
                positions[item.id] = path
    items = {i.id: i for _, i in checklist.items()}
    order = [i.id for _, i in checklist.items()]

    for item_id, path in positions.items():
        item = items[item_id]

        def add(subpath: Path_, message: str, _path: Path_ = path, _id: str = item_id) -> None:
            problems.append(Problem(name, tree.line((*_path, *subpath)), _id, message))

        if item.when is not None:
            target = items.get(item.when.item)
            if target is None:
                add(("when", "item"), f"condition on missing item '{item.when.item}'")
            elif target.kind not in ("confirm", "choice"):
                add(("when", "item"), f"condition on '{target.id}', a {target.kind} item: "
                    "conditions need a confirm or choice item")
            else:
                allowed = target.options if target.kind == "choice" else ["yes", "no"]
                for value in item.when.accepts():
                    if value not in (allowed or []):
                        add(("when",), f"condition value '{value}' is not an answer of "
                            f"'{target.id}' (accepted: {', '.join(allowed or [])})")
                if order.index(target.id) > order.index(item_id):
                    add(("when", "item"), f"condition on '{target.id}', which comes later in "
                        "the walk: move it before this item")
        if item.check is not None:
            add_check_problems(item, items, add, checks)
        elif strict and item.critical and item.is_measured:
            add(("critical",), "a critical measured reading needs a check that judges it "
                "(add 'check: {name: ...}', or mark it 'measured: false' if it is declared "
                "from a nameplate, a setting or a size)")
    return problems


def add_check_problems(item: Item, items: dict[str, Item], add, checks: Registry) -> None:
    spec = item.check
    assert spec is not None
    definition = checks.get(spec.name)
    if definition is None:
        add(("check", "name"), f"unknown check '{spec.name}' (known: {', '.join(sorted(checks))})")
        return
    if item.kind not in definition.kinds:
        add(("check", "name"), f"check '{spec.name}' cannot sit on a {item.kind} item "
            f"(accepted: {', '.join(definition.kinds)})")
    elif item.kind == "reading" and definition.quantities and \
            item.quantity not in definition.quantities:
        add(("check", "name"), f"check '{spec.name}' reads a {' or '.join(definition.quantities)}"
            f", not a {item.quantity}")
    for key, value in spec.inputs.items():
        if key not in definition.inputs:
            add(("check", "inputs", key), f"check '{spec.name}' has no input '{key}' "
                f"(accepted: {', '.join(definition.inputs) or 'none'})")
            continue
        if isinstance(value, str):
            if value not in items:
                add(("check", "inputs", key), f"check input '{key}' names missing item "
                    f"'{value}' (write {{const: {value}}} for a text constant)")
            elif value == item.id:
                add(("check", "inputs", key), f"check input '{key}' names the item itself")
        elif isinstance(value, dict):
            if set(value) != {"const"}:
                add(("check", "inputs", key), f"check input '{key}': a mapping must be "
                    "{const: VALUE}")
        elif not isinstance(value, int | float | bool):
            add(("check", "inputs", key), f"check input '{key}': an item id or a constant")
    for key, spec_input in definition.inputs.items():
        if spec_input.required and key not in spec.inputs:
            add(("check", "inputs"), f"check '{spec.name}' needs input '{key}' "
                f"({spec_input.doc})")
    for key, value in spec.params.items():
        if key not in definition.params:
            add(("check", "params", key), f"check '{spec.name}' has no parameter '{key}' "
                f"(accepted: {', '.join(definition.params) or 'none'})")
            continue
        default = definition.params[key].default
        if isinstance(default, str):
            if not isinstance(value, str):
                add(("check", "params", key), f"parameter '{key}' must be text, got {value!r}")
        elif value is not None and (isinstance(value, bool) or not isinstance(value, int | float)):
            add(("check", "params", key), f"parameter '{key}' must be a number, got {value!r}")

def load(path: str | Path, *, checks: Registry, strict: bool = True) -> Loaded:
    """Read and validate a checklist file (with the rules for checklists in use now), with
    its included sections resolved.

    The text kept (and hashed, and stored with a job) is the resolved one, so a job or a
    record always holds one self-contained checklist.
    """
    return _load(Path(path), (), checks, strict)


def _load(p: Path, stack: tuple[Path, ...], checks: Registry, strict: bool) -> Loaded:
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise UserError(f"{p}: no such file") from None
    except IsADirectoryError:
        raise UserError(f"{p}: is a folder, not a checklist file") from None
    except OSError as exc:
        raise UserError(f"{p}: cannot read ({exc.strerror})") from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise ChecklistError([Problem(str(p), raw[: exc.start].count(b"\n") + 1, "-",
                                      "not UTF-8 text")]) from None
    resolved, origins = _compose(text, p, stack, checks)
    if origins is None:
        return parse(text, str(p), checks=checks, strict=strict)
    try:
        return parse(resolved, str(p), checks=checks, strict=strict)
    except ChecklistError as exc:
        raise ChecklistError(sorted((_moved(pr, origins, str(p)) for pr in exc.problems),
                                    key=lambda pr: (pr.file != str(p), pr.file, pr.line))
                             ) from None


# -- composition: sections included from another checklist ---------------------------------
#
#   sections:
#     - include: {checklist: diverter-1ph, section: isolation}
#
# `checklist` is a shipped name, a file beside this one (NAME.yaml), or a relative path
# ending in .yaml. The included file is loaded and validated on its own first (so its own
# includes resolve too); then its section's text is copied in place of the entry, re-indented,
# under a comment naming where it came from, and the whole is validated like any checklist.
# Problems found in copied lines name the included file and its line.

_INCLUDE_KEYS = {"checklist", "section"}


def _moved(problem: Problem, origins: list[tuple[str, int]], name: str) -> Problem:
    if problem.file != name or not 1 <= problem.line <= len(origins):
        return problem
    file, line = origins[problem.line - 1]
    return Problem(file, line, problem.item, problem.message)


def _include_target(name: str, base: Path) -> Path | None:
    from ..resources import shipped

    if "/" in name or "\\" in name or name.endswith((".yaml", ".yml")):
        candidate = base.parent / name
        return candidate if candidate.is_file() else None
    beside = base.parent / f"{name}.yaml"
    if beside.is_file():
        return beside
    return shipped("checklists").get(name)


def _dash_column(line: str, column: int) -> int | None:
    """Column of the '-' that opens the block sequence entry starting at ``column``."""
    head = line[:column]
    if head.strip() != "-":
        return None
    return head.index("-")


def _span(lines: list[str], node: yaml.Node) -> tuple[int, int]:
    """0-based [first, last) lines of a block node, trailing blank lines left out."""
    first, end = node.start_mark.line, node.end_mark.line
    if end < len(lines) and lines[end][: node.end_mark.column].strip():
        end += 1
    while end > first + 1 and not lines[end - 1].strip():
        end -= 1
    return first, end


def _compose(text: str, path: Path, stack: tuple[Path, ...], checks: Registry
             ) -> tuple[str, list[tuple[str, int]] | None]:
    """The text with every ``include`` entry replaced by the section it names, and for every
    line of the result the (file, line) it came from; (text, None) when nothing is included."""
    if "include" not in text:
        return text, None
    try:
        root = yaml.compose(text, Loader=_COMPOSER)
    except yaml.YAMLError:
        return text, None  # parse() reports the syntax error with its line
    if not isinstance(root, yaml.MappingNode):
        return text, None
    sections = next((v for k, v in root.value
                     if isinstance(k, yaml.ScalarNode) and k.value == "sections"), None)
    if not isinstance(sections, yaml.SequenceNode):
        return text, None
    name = str(path)
    lines = text.splitlines()
    problems: list[Problem] = []
    replacements: list[tuple[int, int, list[str], list[tuple[str, int]]]] = []
    me = path.resolve()
    composed: dict[str, yaml.Node] = {}  # each included text composed once, however many
    for entry in sections.value:        # of its sections are lent
        if not isinstance(entry, yaml.MappingNode):
            continue
        keys = {k.value: v for k, v in entry.value if isinstance(k, yaml.ScalarNode)}
        if "include" not in keys:
            continue
        line = entry.start_mark.line + 1

        def bad(message: str, _line: int = line) -> None:
            problems.append(Problem(name, _line, "-", message))

        spec = keys["include"]
        if len(entry.value) != 1:
            bad("an include entry holds only 'include: {checklist: NAME, section: ID}'")
            continue
        if not isinstance(spec, yaml.MappingNode):
            bad("include needs a mapping: include: {checklist: NAME, section: ID}")
            continue
        fields = {k.value: v.value for k, v in spec.value
                  if isinstance(k, yaml.ScalarNode) and isinstance(v, yaml.ScalarNode)}
        if set(fields) != _INCLUDE_KEYS or len(spec.value) != 2 or \
                not all(isinstance(v, str) and v for v in fields.values()):
            bad("include needs exactly 'checklist' (a shipped name or a file beside this one) "
                "and 'section' (a section id), both as text")
            continue
        target = _include_target(fields["checklist"], path)
        if target is None:
            from ..resources import shipped

            bad(f"included checklist '{fields['checklist']}' not found beside this file nor "
                f"shipped (shipped: {', '.join(sorted(shipped('checklists'))) or 'none'})")
            continue
        if target.resolve() == me or target.resolve() in stack:
            chain = " → ".join(q.name for q in (*stack, me, target.resolve()))
            bad(f"include cycle: {chain}")
            continue
        dash = _dash_column(lines[entry.start_mark.line], entry.start_mark.column)
        if dash is None:
            bad("write an include as a block entry of 'sections' ('- include: {...}')")
            continue
        included = _load(target, (*stack, me), checks, True)
        inc_text = included.text
        inc_lines = inc_text.splitlines()
        inc_root = composed.get(inc_text)
        if inc_root is None:
            inc_root = composed[inc_text] = yaml.compose(inc_text, Loader=_COMPOSER)
        inc_sections = next(v for k, v in inc_root.value if k.value == "sections")
        found = None
        for node in inc_sections.value:
            ids = [v.value for k, v in node.value if k.value == "id"]
            if ids == [fields["section"]]:
                found = node
        if found is None:
            known = ", ".join(s.id for s in included.checklist.sections)
            bad(f"checklist '{fields['checklist']}' has no section '{fields['section']}' "
                f"(sections: {known})")
            continue
        first, end = _span(inc_lines, found)
        inc_dash = _dash_column(inc_lines[first], found.start_mark.column)
        if inc_dash is None:
            bad(f"section '{fields['section']}' of '{fields['checklist']}' is not a block entry")
            continue
        shift = dash - inc_dash
        block = []
        for raw in inc_lines[first:end]:
            if not raw.strip():
                block.append("")
            elif shift >= 0:
                block.append(" " * shift + raw)
            elif raw[:-shift].strip():
                block = []
                break
            else:
                block.append(raw[-shift:])
        if not block:
            bad(f"section '{fields['section']}' of '{fields['checklist']}' is indented less "
                "than this include; indent it as this file does")
            continue
        header = (f"{' ' * dash}# included: section '{fields['section']}' of "
                  f"{included.checklist.id} {included.checklist.version} "
                  f"(sha256 {included.sha256[:16]})")
        inc_origins = _origins_of(target, inc_text, checks)
        block_origins = [(name, line)] + [inc_origins[n] for n in range(first, end)]
        span = _span(lines, entry)
        replacements.append((span[0], span[1], [header, *block], block_origins))
    if problems:
        raise ChecklistError(problems)
    if not replacements:
        return text, None
    out: list[str] = []
    origins: list[tuple[str, int]] = []
    pos = 0
    for first, end, block, block_origins in replacements:
        out += lines[pos:first]
        origins += [(name, n + 1) for n in range(pos, first)]
        out += block
        origins += block_origins
        pos = end
    out += lines[pos:]
    origins += [(name, n + 1) for n in range(pos, len(lines))]
    return "\n".join(out) + "\n", origins


def _origins_of(path: Path, resolved_text: str, checks: Registry) -> list[tuple[str, int]]:
    """(file, line) of every line of a resolved checklist text (its own lines when it
    includes nothing; otherwise recomposed to find them)."""
    raw = path.read_text(encoding="utf-8")
    if raw == resolved_text:
        return [(str(path), n + 1) for n in range(len(raw.splitlines()))]
    text, origins = _compose(raw, path, (), checks)
    if origins is None or text != resolved_text:
        return [(str(path), n + 1) for n in range(len(resolved_text.splitlines()))]
    return origins
