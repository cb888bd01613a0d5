"""pydantic's validation errors turned into the case file's messages: the key path as written
(list entries counted from 1), what was expected, and the nearest valid key for a misspelt one."""

from __future__ import annotations

import difflib

from pydantic import BaseModel, ValidationError

from .schema import BORE_TEMPLATES, CaseModel, ConicalBore, ContouredBore, PointsBore, ReducerBore, SegmentsBore, SpearBore


def _nearest_key(key: str, where: list, template, model=CaseModel) -> str | None:
    """The valid key nearest in spelling to a misspelt one, in the same table."""
    fields = None
    try:
        node = model
        for item in where:
            if isinstance(item, int):
                continue
            f = node.model_fields.get(str(item))
            if f is None:
                return None
            ann = f.annotation
            # the bore section: the template's model; lists and optionals: their element model
            cands = [a for a in getattr(ann, "__args__", ()) if isinstance(a, type) and issubclass(a, BaseModel)]
            if str(item) == "bore" and template:
                cands = [c for c in _bore_models() if c.model_fields["template"].annotation.__args__[0] == template] or cands
            if isinstance(ann, type) and issubclass(ann, BaseModel):
                cands = [ann]
            if not cands:
                args = getattr(ann, "__args__", ())
                for a in args:
                    for b in getattr(a, "__args__", ()):
                        if isinstance(b, type) and issubclass(b, BaseModel):
                            cands.append(b)
            if not cands:
                return None
            node = cands[0]
        fields = list(node.model_fields)
    except Exception:  # a suggestion is a courtesy: never let it hide the real message
        return None
    close = difflib.get_close_matches(key, fields, n=1, cutoff=0.7)
    return close[0] if close else None


def _bore_models():
    return (ConicalBore, ContouredBore, ReducerBore, SpearBore, SegmentsBore, PointsBore)



# the validation library's own wording for the plain kinds of error, in the words of this tool
_PLAIN = {
    "greater_than": lambda c: f"expected a number above {c.get('gt')}",
    "greater_than_equal": lambda c: f"expected a number of at least {c.get('ge')}",
    "less_than": lambda c: f"expected a number below {c.get('lt')}",
    "less_than_equal": lambda c: f"expected a number of at most {c.get('le')}",
    "int_type": lambda c: "expected a whole number",
    "int_from_float": lambda c: "expected a whole number",
    "int_parsing": lambda c: "expected a whole number",
    "float_type": lambda c: "expected a number",
    "float_parsing": lambda c: "expected a number",
    "bool_type": lambda c: "expected true or false",
    "bool_parsing": lambda c: "expected true or false",
    "string_type": lambda c: "expected text in quotes",
    "finite_number": lambda c: "expected a finite number",
    "list_type": lambda c: "expected a list in brackets",
    "tuple_type": lambda c: "expected a list in brackets",
    "too_long": lambda c: f"expected at most {c.get('max_length')} items in the list",
    "dict_type": lambda c: "expected a table",
    "model_type": lambda c: "expected a table",
    "model_attributes_type": lambda c: "expected a table",
}
_TYPE_NAMES = ("str", "int", "float", "bool", "list", "tuple", "dict")


def _is_type_name(item) -> bool:
    """A location part the validation library adds for a member of a union type ("list[...]", "str")."""
    return isinstance(item, str) and (item in _TYPE_NAMES or "[" in item or item.startswith("function-"))


def format_validation(exc: ValidationError, data: dict, prefix: str = "", model=CaseModel) -> list[tuple[str, str]]:
    """(key path, message) for every error of ``exc`` (raised by ``model`` on ``data``); ``prefix``:
    the table the model validated (its keys are reported under it)."""
    problems = []
    template = data.get("bore", {}).get("template") if isinstance(data.get("bore"), dict) else None
    for err in exc.errors():
        loc = ([prefix] if prefix else []) + list(err["loc"])
        # drop the discriminator tag pydantic inserts for the bore template
        if len(loc) > 1 and loc[0] == "bore" and loc[1] == template:
            del loc[1]
        parts = []
        for item in (i for i in loc if not _is_type_name(i)):
            if isinstance(item, int):  # list positions count from 1, as in profile errors
                parts[-1] = f"{parts[-1]}[{item + 1}]" if parts else f"[{item + 1}]"
            else:
                parts.append(str(item))
        path = ".".join(parts)
        kind = err["type"]
        given = err.get("input")
        if kind == "extra_forbidden":
            msg = f"unknown key (a typo?): {parts[-1]!r} is not a case-file key here"
            near = _nearest_key(parts[-1], loc[1 if prefix else 0:-1], template, model)
            if near:
                msg += f"; did you mean {near!r}?"
        elif kind == "missing" and isinstance(loc[-1], int):  # a list of fixed length, given short
            path = path[: path.rindex("[")]
            msg = f"expected more items in the list: item {loc[-1] + 1} is missing"
        elif kind == "missing":
            msg = "missing: this key is required" + (f' for template "{template}"' if loc[0] == "bore" and template else "")
        elif kind == "union_tag_invalid":
            msg = f"expected template one of {', '.join(BORE_TEMPLATES)}, got {given.get('template')!r}" if isinstance(given, dict) else err["msg"]
            path = "bore.template"
        elif kind == "union_tag_not_found":
            msg = f"missing: bore.template (one of {', '.join(BORE_TEMPLATES)})"
            path = "bore.template"
        elif kind == "literal_error":
            msg = f"expected {err['ctx']['expected']}, got {given!r}"
        elif kind == "list_type" and isinstance(given, dict):
            msg = (f"expected a list of tables, got one table: write [[{path}]] (double brackets) for each entry, "
                   f"or {path} = [{{...}}, ...]")
        elif kind in _PLAIN:
            msg = _PLAIN[kind](err.get("ctx") or {}) + f", got {given!r}"
        else:
            msg = err["msg"]
            if msg.startswith("Value error, "):
                msg = msg[len("Value error, ") :]
            if kind not in ("quantity", "positive", "non_negative", "angle_range", "solver_kind", "plausible") and given is not None and not isinstance(given, (dict, list)):
                msg = f"{msg} (got {given!r})"
        problems.append((path, msg))
    return _merged(problems)


def _merged(problems: list[tuple[str, str]]) -> list[tuple[str, str]]:
    """One line a key where the members of a union type fail alike ("expected text in quotes, got 0"
    and "expected a list in brackets, got 0" become "expected text in quotes or a list in brackets,
    got 0"); other problems are kept as they are."""
    out: list[tuple[str, str]] = []
    for path, msg in problems:
        if out and out[-1][0] == path and msg.startswith("expected ") and out[-1][1].startswith("expected "):
            head, _, got = out[-1][1].rpartition(", got ")
            new_head, _, new_got = msg.rpartition(", got ")
            if got and got == new_got:
                out[-1] = (path, f"{head} or {new_head[len('expected '):]}, got {got}")
                continue
        out.append((path, msg))
    return out
