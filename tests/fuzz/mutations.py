"""Mutated network files made from the bundled ones, for the fuzz test and tests/fuzz/run_fuzz.py.

A mutation is a name and a function ``(rng, data) -> bytes``: it changes the parsed file
(``data``, plain dicts and lists from ``yaml.safe_load``) or its text, and returns the bytes of
the file to try. ``rng`` is a :class:`random.Random`, so a (base file, mutation, seed) triple
always gives the same file. The mutated files are demo data, never check values.
"""

from __future__ import annotations

import copy
import json
import pathlib
import random

import yaml

ROOT = pathlib.Path(__file__).resolve().parents[2]
BASES = {p.stem: p.read_text() for p in sorted((ROOT / "networks").glob("*.yaml"))}

NUMERIC = ("capacity", "module", "cost_per_module", "fixed_cost", "max_capacity", "installed",
           "length", "reservation", "traffic", "rate", "holding", "bandwidth", "target",
           "value", "x", "y", "max_hops", "max_routes")
ODD_NUMBERS = [
    "1e308", "2e400", "-2e400", ".inf", "-.inf", ".nan", "-1", "0", "-0.0", "1e-300",
    "1.0e-15", "0.5", "9999999", "10000000", "123456789012345678901234567890",
    "9" * 300, "9" * 5000, "2026-02-30", "12:30:00", "0x1F", "0o17", "1_000", "._",
    "'12'", "lots", "[1, 2]", "{a: 1}", "true", "null", "~", "!!binary aGk=",
]
ODD_VALUES = ["lots", "", "[]", "{}", "[[[]]]", "true", "false", "NO", "null", "- x",
              "'a: b'", "&x 1", "*undefined", "!!python/object:os.system x", "\"\\x00\""]


def paths(data, prefix=()):
    """Every (path, value) in a nested structure of dicts and lists."""
    out = [(prefix, data)]
    if isinstance(data, dict):
        for k, v in data.items():
            out += paths(v, prefix + (k,))
    elif isinstance(data, list):
        for i, v in enumerate(data):
            out += paths(v, prefix + (i,))
    return out


def _set(data, path, value):
    node = data
    for p in path[:-1]:
        node = node[p]
    node[path[-1]] = value


def _delete(data, path):
    node = data
    for p in path[:-1]:
        node = node[p]
    del node[path[-1]]


def _dump(data) -> bytes:
    return yaml.safe_dump(data, sort_keys=False, default_flow_style=None, width=100).encode()


def _leaf_paths(data, keys=None):
    out = [(p, v) for p, v in paths(data) if p and not isinstance(v, (dict, list))]
    if keys is not None:
        out = [(p, v) for p, v in out if p[-1] in keys]
    return out


def _replace_text(data, path, raw):
    """Dump ``data`` with the value at ``path`` written as the raw YAML text ``raw``."""
    marker = "__FUZZ_MARKER__"
    _set(data, path, marker)
    return _dump(data).replace(marker.encode(), raw.encode(), 1)


# -- mutations ---------------------------------------------------------------------------------
def delete_key(rng, data):
    choices = [p for p, _ in paths(data) if p]
    _delete(data, rng.choice(choices))
    return _dump(data)


def odd_number(rng, data):
    path, _ = rng.choice(_leaf_paths(data, NUMERIC) or _leaf_paths(data))
    return _replace_text(data, path, rng.choice(ODD_NUMBERS))


def odd_value(rng, data):
    path, _ = rng.choice(_leaf_paths(data))
    return _replace_text(data, path, rng.choice(ODD_VALUES))


def wrong_type(rng, data):
    path, _ = rng.choice([(p, v) for p, v in paths(data) if p])
    value = rng.choice(["text", 3, 2.5, None, True, [], {}, [1, [2]], {"a": {"b": 1}}])
    _set(data, path, value)
    return _dump(data)


def scale_number(rng, data):
    path, v = rng.choice([(p, v) for p, v in _leaf_paths(data, NUMERIC)
                          if isinstance(v, (int, float)) and not isinstance(v, bool)]
                         or _leaf_paths(data))
    factor = rng.choice([1e6, 1e12, -1, 1e-9, 1e-15, 1000, 0])
    new = v * factor if isinstance(v, (int, float)) else factor
    if isinstance(v, int) and float(new).is_integer() and abs(new) < 1e18:
        new = int(new)
    _set(data, path, new)
    return _dump(data)


def deep_nesting(rng, data):
    path, _ = rng.choice(_leaf_paths(data))
    depth = rng.choice([30, 200, 999, 5000])
    if rng.random() < 0.5:
        raw = "[" * depth + "]" * depth
    else:
        raw = "{a: " * depth + "1" + "}" * depth
    return _replace_text(data, path, raw)


def alias_bomb(rng, data):
    levels = rng.choice([4, 6, 9])
    lines = ["x-a0: &a0 [lol, lol, lol, lol, lol, lol, lol, lol, lol]"]
    for i in range(1, levels):
        lines.append(f"x-a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]")
    if rng.random() < 0.5:
        lines.append(f"description: *a{levels - 1}")
    return ("\n".join(lines) + "\n").encode() + _dump(data)


def merge_bomb(rng, data):
    lines = ["x-m0: &m0 {a: 1, b: 2}"]
    for i in range(1, 8):
        lines.append(f"x-m{i}: &m{i} {{<<: [" + ", ".join([f"*m{i - 1}"] * 8) + f"], c{i}: 1}}")
    return ("\n".join(lines) + "\n").encode() + _dump(data)


def encoding(rng, data):
    text = _dump(data).decode()
    how = rng.choice(["utf-16", "utf-32", "bom", "latin-1", "nul", "truncate", "binary",
                      "crlf", "control"])
    if how in ("utf-16", "utf-32"):
        return text.encode(how)
    if how == "bom":
        return b"\xef\xbb\xbf" + text.encode()
    if how == "latin-1":
        return text.replace("name: ", "name: Caf\u00e9 ", 1).encode("latin-1")
    if how == "nul":
        cut = rng.randrange(len(text))
        return (text[:cut] + "\0" + text[cut:]).encode()
    if how == "truncate":
        return text[: rng.randrange(len(text))].encode()
    if how == "binary":
        return bytes(rng.randrange(256) for _ in range(rng.choice([10, 500, 5000])))
    if how == "crlf":
        return text.replace("\n", "\r\n").encode()
    cut = rng.randrange(len(text))
    return (text[:cut] + chr(rng.choice([1, 7, 27, 0x7F, 0xFFFE])) + text[cut:]).encode(
        "utf-8", "surrogatepass")


def duplicate_item(rng, data):
    lists = [(p, v) for p, v in paths(data) if isinstance(v, list) and v]
    path, seq = rng.choice(lists)
    seq.append(copy.deepcopy(rng.choice(seq)))
    return _dump(data)


def extreme_holding(rng, data):
    demands = data.get("demands") or []
    if isinstance(demands, list) and demands and isinstance(demands[0], dict):
        d = rng.choice(demands)
        d["holding"] = rng.choice([1e-15, 1e-9, 1e4, 9999.0])
    return _dump(data)


def huge_module(rng, data):
    links = data.get("links") or []
    if isinstance(links, list) and links and isinstance(links[0], dict):
        link = rng.choice(links)
        link["module"] = rng.choice([9999999, 1000000, 4096])
        link.pop("capacity", None)
        link.pop("max_capacity", None)
        link.pop("installed", None)
    return _dump(data)


def big_capacity(rng, data):
    for link in data.get("links") or []:
        if isinstance(link, dict):
            link["capacity"] = rng.choice([1000000, 5000000, 9999999])
            link.pop("max_capacity", None)
    return _dump(data)


def shuffle_routes(rng, data):
    ids = [link.get("id") for link in data.get("links") or [] if isinstance(link, dict)]
    for d in data.get("demands") or []:
        if isinstance(d, dict) and rng.random() < 0.5 and ids:
            d["routes"] = [rng.sample(ids, min(len(ids), rng.randint(1, 4)))
                           for _ in range(rng.randint(1, 3))]
    return _dump(data)


def long_routes(rng, data):
    routing = data.setdefault("routing", {})
    if isinstance(routing, dict):
        routing["max_hops"] = rng.choice([8, 12, 20])
        routing.pop("max_routes", None)
    for d in data.get("demands") or []:
        if isinstance(d, dict):
            d.pop("routes", None)
    return _dump(data)


def big_file(rng, data):
    """Many demands (a few MB): reading must stay quick and small."""
    sites = [s["id"] if isinstance(s, dict) else s for s in data.get("sites") or []]
    out = _dump(data).decode()
    if len(sites) < 2:
        return out.encode()
    extra = "".join(
        f"  - {{id: F{i}, between: [{sites[i % len(sites)]}, "
        f"{sites[(i + 1) % len(sites)]}], traffic: 0.01}}\n"
        for i in range(rng.choice([20_000, 60_000]))
    )
    return out.replace("demands:\n", "demands:\n" + extra, 1).encode()


def to_json(rng, data):
    """A JSON document is YAML too."""
    return json.dumps(data).encode()


MUTATIONS = {f.__name__: f for f in (
    delete_key, odd_number, odd_value, wrong_type, scale_number, deep_nesting, alias_bomb,
    merge_bomb, encoding, duplicate_item, extreme_holding, huge_module, big_capacity,
    shuffle_routes, long_routes, big_file, to_json,
)}


def mutated(base: str, mutation: str, seed: int) -> bytes:
    """The bytes of ``base`` (a bundled network's stem) after ``mutation`` with ``seed``."""
    rng = random.Random(f"{base}/{mutation}/{seed}")
    data = yaml.safe_load(BASES[base])
    return MUTATIONS[mutation](rng, data)
