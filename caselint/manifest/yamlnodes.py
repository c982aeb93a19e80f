"""Safe YAML loading that keeps the line of every key, for case files and rule sets.

The document is composed into PyYAML's node tree with a safe loader and turned into
plain data here, so each key path gets its 1-based line and column. Key paths are
dotted (``physics.fluid.density``), list items indexed (``checks.waivers[0].expires``),
``""`` is the document itself.

Beyond what ``yaml.safe_load`` does, this loader
- refuses duplicate keys (naming both lines), where PyYAML silently keeps the last; all
  of them are reported together, and a caller that collects problems
  (``keep_problems=True``) gets them in :attr:`YamlDoc.problems` with the first value kept;
- names, for a syntax error inside a bracket or a quote, both where that construct
  opened and where parsing stopped (an unclosed ``{`` is found lines later);
- reads ``2e-4`` and ``1e5`` as numbers (YAML 1.2), where PyYAML 1.1 rules read text;
- allows anchors, aliases and ``<<`` merge keys, but refuses a document that expands to
  more than :data:`MAX_VALUES` values (the "billion laughs" attack builds 10^9 values
  from a few lines) and one whose alias refers to a collection containing it;
- refuses tags other than the standard YAML scalar, list and mapping types.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml
from yaml.nodes import MappingNode, Node, ScalarNode, SequenceNode

from caselint.errors import CaseFileError, CaseFileErrors

#: Most values (scalars, lists, mappings; every alias use counted again) a document may hold.
MAX_VALUES = 100_000
#: Deepest nesting of lists and mappings; a case file needs about 5 levels.
MAX_DEPTH = 100
#: Largest file read (bytes); case files and rule sets are a few KiB. Pure-Python YAML
#: parsing takes about 1 s per 256 KiB, so this bounds time and memory.
MAX_FILE_BYTES = 512 * 1024

_MAP_TAGS = {"tag:yaml.org,2002:map"}
_SEQ_TAGS = {"tag:yaml.org,2002:seq"}
_MERGE_TAG = "tag:yaml.org,2002:merge"
_NULL_TAG = "tag:yaml.org,2002:null"


@dataclass(frozen=True)
class YamlDoc:
    """A parsed YAML mapping with the 1-based line and column of each key path.

    ``problems`` are the duplicate keys found, when the caller asked to keep them.
    """

    data: dict[Any, Any]
    lines: dict[str, int]
    columns: dict[str, int] = field(default_factory=dict)
    file: str = ""
    problems: tuple[CaseFileError, ...] = ()

    def line_of(self, key: str) -> int | None:
        """1-based line of a key path, or of its nearest parent that has one."""
        return _nearest(self.lines, key)

    def column_of(self, key: str) -> int | None:
        """1-based column of a key path, or of its nearest parent that has one."""
        return _nearest(self.columns, key)


def _nearest(table: dict[str, int], key: str) -> int | None:
    while key:
        if key in table:
            return table[key]
        key = re.sub(r"(\[\d+\]|\.[^.\[]*|^[^.\[]*)$", "", key, count=1)
    return table.get("")


class _TooDeep(yaml.MarkedYAMLError):
    """Nesting deeper than :data:`MAX_DEPTH`, found while composing."""


class _SafeLoader(yaml.SafeLoader):
    """PyYAML's safe loader, reading exponent numbers without a dot as floats."""

    _depth = 0

    def compose_node(self, parent, index):  # type: ignore[no-untyped-def]
        # PyYAML composes recursively: refuse deep nesting at its line, before Python's
        # recursion limit is hit somewhere without one.
        if self._depth >= MAX_DEPTH:
            raise _TooDeep(problem=f"the document is nested too deeply (more than {MAX_DEPTH} "
                                   "levels of lists and mappings)",
                           problem_mark=self.peek_event().start_mark)
        self._depth += 1
        try:
            return super().compose_node(parent, index)
        finally:
            self._depth -= 1


# YAML 1.1 (PyYAML) needs a dot and a signed exponent ("1.0e-4"); engineers write "2e-4".
_SafeLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float",
    re.compile(r"^[-+]?(?:[0-9][0-9_]*(?:\.[0-9_]*)?|\.[0-9_]+)[eE][-+]?[0-9]+$"),
    list("-+0123456789."),
)


def child_path(path: str, key: object) -> str:
    """Key path of ``key`` inside the mapping at ``path``."""
    return f"{path}.{key}" if path else str(key)


def load_yaml(path: str | Path, *, keep_problems: bool = False) -> YamlDoc:
    """Read a YAML file whose top level is a mapping; raise CaseFileError on any problem.

    With ``keep_problems`` duplicate keys are returned in :attr:`YamlDoc.problems` rather
    than raised, so that they can be reported with the problems found later.
    """
    file = str(path)
    try:
        with open(path, "rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)    # bounded, even for /dev/zero
    except FileNotFoundError:
        raise CaseFileError(file, "file not found") from None
    except IsADirectoryError:
        raise CaseFileError(file, "is a folder, not a file") from None
    except OSError as exc:
        raise CaseFileError(file, f"cannot read the file: {exc.strerror or exc}") from None
    if len(raw) > MAX_FILE_BYTES:
        raise CaseFileError(file, f"the file is larger than {MAX_FILE_BYTES // 1024} KiB; a case "
                                  "file or rule set is a few KiB (is this the right file?)")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise CaseFileError(file, "the file is not UTF-8 text", line=line) from None
    return parse_yaml(text, file, keep_problems=keep_problems)


def parse_yaml(text: str, file: str = "<string>", *, keep_problems: bool = False) -> YamlDoc:
    """Parse YAML text (see :func:`load_yaml`); ``file`` is only used in messages."""
    loader = None
    try:
        loader = _SafeLoader(text)
        root = loader.get_single_node()
        if root is None or (isinstance(root, ScalarNode) and root.tag == _NULL_TAG
                            and not root.value):
            raise CaseFileError(file, "the file holds no YAML document; expected a mapping of keys")
        builder = _Builder(loader, file)
        builder.record("", root)
        if not isinstance(root, MappingNode):
            kind = "a list" if isinstance(root, SequenceNode) else "a single value"
            raise CaseFileError(
                file, f"the top level must be a mapping of keys, got {kind}",
                line=root.start_mark.line + 1, column=root.start_mark.column + 1,
            )
        data = builder.build(root, "")
        if builder.problems and not keep_problems:
            raise CaseFileErrors.of(builder.problems)
        return YamlDoc(data, builder.lines, builder.columns, file, tuple(builder.problems))
    except _TooDeep as exc:
        mark = exc.problem_mark
        raise CaseFileError(file, exc.problem, line=mark.line + 1,
                            column=mark.column + 1) from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        if mark is None:
            raise CaseFileError(file, f"YAML syntax error: {syntax_problem(exc)}") from None
        raise CaseFileError(file, f"YAML syntax error: {syntax_problem(exc)}",
                            line=mark.line + 1, column=mark.column + 1) from None
    except yaml.reader.ReaderError as exc:
        line = text[: exc.position].count("\n") + 1
        raise CaseFileError(file, f"unreadable character: {exc.reason}", line=line) from None
    except yaml.YAMLError as exc:
        raise CaseFileError(file, f"YAML error: {exc}") from None
    except RecursionError:
        raise CaseFileError(file, "the document is nested too deeply") from None
    finally:
        if loader is not None:
            loader.dispose()


#: PyYAML's contexts, as the construct a syntax error happened in and whether the error
#: means the construct was left open (a bracket or quote without its end).
_CONSTRUCTS = {
    "while parsing a flow mapping": ("the mapping '{' opened", True),
    "while parsing a flow sequence": ("the list '[' opened", True),
    "while scanning a quoted scalar": ("the quoted text opened", True),
    "while parsing a block mapping": ("the block of keys that starts", False),
    "while parsing a block collection": ("the list that starts", False),
    "while scanning a simple key": ("the key that starts", False),
    "while parsing a flow node": ("the value that starts", False),
    "while parsing a block node": ("the value that starts", False),
}
#: PyYAML's token names, as words.
_TOKENS = {
    "<stream end>": "the end of the file", "<block end>": "the end of an indented block",
    "<block mapping start>": "a key at a new indentation", "<scalar>": "a plain value",
    "<block sequence start>": "a list item at a new indentation",
    "<flow mapping start>": "'{'", "<flow sequence start>": "'['",
}


def _at(mark: yaml.Mark) -> str:
    return f"line {mark.line + 1}, column {mark.column + 1}"


def syntax_problem(exc: yaml.MarkedYAMLError) -> str:
    """What went wrong, where parsing stopped and, inside a bracket, a quote or a block,
    where that construct began: an unclosed ``{`` is only noticed lines later."""
    problem = exc.problem or exc.context or "invalid YAML"
    problem = re.sub(r"'?(<[a-z ]+>)'?", lambda m: _TOKENS.get(m.group(1), m.group(1)),
                     problem).replace("end of stream", "end of the file")
    construct, can_be_open = _CONSTRUCTS.get(exc.context or "", (None, False))
    start, stop = exc.context_mark, exc.problem_mark
    if construct is None or start is None or stop is None or not exc.problem:
        if exc.context and exc.problem and exc.context not in _CONSTRUCTS:
            return f"{problem} ({exc.context})"
        return problem
    text = f"{problem} at {_at(stop)}; "
    unclosed = can_be_open and ("expected ','" in exc.problem or "end of stream" in exc.problem
                                or "<stream end>" in exc.problem)
    if unclosed:
        closer = {"mapping": "'}'", "list": "']'"}.get(construct.split()[1], "quote")
        text += f"{construct} on {_at(start)} is not closed (a missing {closer}"
        text += " or ','" if closer != "quote" else ""
        return text + ")"
    return text + f"the error is in {construct} on {_at(start)}"


def _bad_tag(node: Node) -> str:
    return (f"unsupported tag {node.tag!r}; only plain text, numbers, true/false, dates, "
            "null, lists and mappings are allowed")


class _Builder:
    """Turns a composed node tree into plain data, recording where each key is."""

    def __init__(self, loader: yaml.SafeLoader, file: str) -> None:
        self.loader = loader
        self.file = file
        self.lines: dict[str, int] = {}
        self.columns: dict[str, int] = {}
        self.count = 0
        self.problems: list[CaseFileError] = []
        self.open: set[int] = set()   # ids of collections being built: an alias back to one is a cycle

    def record(self, path: str, node: Node) -> None:
        self.lines[path] = node.start_mark.line + 1
        self.columns[path] = node.start_mark.column + 1

    def fail(self, node: Node, message: str, key: str = "") -> CaseFileError:
        mark = node.start_mark
        return CaseFileError(self.file, message, line=mark.line + 1, column=mark.column + 1, key=key)

    def build(self, node: Node, path: str) -> Any:
        self.count += 1
        if self.count > MAX_VALUES:
            raise self.fail(node, f"the document expands to more than {MAX_VALUES} values "
                                  "through anchors and aliases; refusing to expand it", path)
        if isinstance(node, ScalarNode):
            return self.scalar(node, path)
        if id(node) in self.open:
            raise self.fail(node, "an alias refers to the list or mapping that contains it; "
                                  "recursive documents are not allowed", path)
        self.open.add(id(node))
        try:
            if isinstance(node, SequenceNode):
                if node.tag not in _SEQ_TAGS:
                    raise self.fail(node, _bad_tag(node), path)
                items = []
                for index, item in enumerate(node.value):
                    item_path = f"{path}[{index}]"
                    self.record(item_path, item)
                    items.append(self.build(item, item_path))
                return items
            if node.tag not in _MAP_TAGS:
                raise self.fail(node, _bad_tag(node), path)
            return self.mapping(node, path)
        finally:
            self.open.discard(id(node))

    def scalar(self, node: ScalarNode, path: str) -> Any:
        try:
            return self.loader.construct_object(node, deep=True)
        except yaml.constructor.ConstructorError:
            raise self.fail(node, _bad_tag(node), path) from None
        except (ValueError, OverflowError) as exc:
            kind = node.tag.rpartition(":")[2].replace("timestamp", "date")
            raise self.fail(node, f"cannot read {node.value!r} as a {kind}: {exc}", path) from None

    def key(self, node: Node, path: str) -> Any:
        if not isinstance(node, ScalarNode):
            raise self.fail(node, "a key must be a plain value, not a list or mapping", path)
        return self.scalar(node, path)

    def mapping(self, node: MappingNode, path: str) -> dict[Any, Any]:
        out: dict[Any, Any] = {}
        first_line: dict[Any, int] = {}
        merges: list[Node] = []
        for key_node, value_node in node.value:
            if key_node.tag == _MERGE_TAG:
                merges.append(value_node)
                continue
            key = self.key(key_node, path)
            sub = child_path(path, key)
            line = key_node.start_mark.line + 1
            try:
                seen = first_line.get(key)
            except TypeError:
                raise self.fail(key_node, "a key must be a plain value", sub) from None
            if seen is not None:
                # kept to be reported with the rest; the first value stays
                self.problems.append(self.fail(key_node, f"duplicate key '{key}' (first on "
                                                         f"line {seen}, again on line {line})",
                                               sub))
                continue
            first_line[key] = line
            self.record(sub, key_node)
            out[key] = self.build(value_node, sub)
        # A merge (<<: *base) fills only keys the mapping does not set itself; earlier
        # merged mappings win over later ones, as in the YAML merge-key spec.
        for key_node, value_node in self.merged_pairs(merges, path, set()):
            key = self.key(key_node, path)
            if key in out:
                continue
            sub = child_path(path, key)
            self.record(sub, key_node)
            out[key] = self.build(value_node, sub)
        return out

    def merged_pairs(self, sources: list[Node], path: str, stack: set[int]) -> list[tuple[Node, Node]]:
        pairs: list[tuple[Node, Node]] = []
        for source in sources:
            nodes = source.value if isinstance(source, SequenceNode) else [source]
            for merged in nodes:
                if not isinstance(merged, MappingNode):
                    raise self.fail(merged, "a merge key '<<' takes a mapping or a list of "
                                            "mappings", path)
                if id(merged) in stack or id(merged) in self.open:
                    raise self.fail(merged, "a merge key refers to the mapping that contains "
                                            "it; recursive documents are not allowed", path)
                stack.add(id(merged))
                own = [(k, v) for k, v in merged.value if k.tag != _MERGE_TAG]
                nested = [v for k, v in merged.value if k.tag == _MERGE_TAG]
                pairs.extend(own)
                pairs.extend(self.merged_pairs(nested, path, stack))
                stack.discard(id(merged))
        self.count += len(pairs)
        if self.count > MAX_VALUES:
            raise self.fail(sources[0], f"the document expands to more than {MAX_VALUES} values "
                                        "through merge keys; refusing to expand it", path)
        return pairs
