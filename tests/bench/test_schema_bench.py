"""Benchmark: checking a 10,000-field schema against a mutated copy, next to fastavro parsing them.

Run with `python -m pytest tests/bench/test_schema_bench.py -s`. Each figure is the best of
several interleaved runs, in processor time of this process; ratios compare against fastavro measured in the same
run. "check" is `resolve` on the two parsed schemas, the bound the issue sets (at most twice
fastavro's parse of both); "parse both and check" adds our own parsing and is printed beside it.
"""

from __future__ import annotations

import copy
import gc
import sys
import time
from collections.abc import Callable

import fastavro

from registry.schema import (
    canonical_form,
    diff,
    fingerprint,
    leaf_fields,
    load,
    parse,
    resolve,
    to_json,
)

REPEATS = 15


def timed(action: Callable[[], object]) -> float:
    """Processor time of one run in this process (so other jobs on a shared machine do not
    count), with the cyclic garbage collector paused as the standard library's timeit does."""
    gc.collect()
    gc.disable()
    try:
        start = time.process_time()
        action()
        return time.process_time() - start
    finally:
        gc.enable()


def best_times(actions: dict[str, Callable[[], object]], repeats: int = REPEATS
               ) -> dict[str, float]:
    """Best time of each action over `repeats` rounds; each round runs every action once, so
    all parties see the same load on a shared machine."""
    best = {label: float("inf") for label in actions}
    for _ in range(repeats):
        for label, action in actions.items():
            best[label] = min(best[label], timed(action))
    return best


def wide_record(total_fields: int) -> dict:
    """A record with `total_fields` fields in all: primitives, nullable unions, enums, and a
    nested record of ten fields in every tenth place."""
    fields: list[dict] = []
    count = index = 0
    while count < total_fields:
        kind = index % 10
        name = f"f{index}"
        if kind == 9 and total_fields - count > 11:
            inner = [{"name": f"g{j}", "type": ["null", "double"] if j % 2 else "int"}
                     for j in range(10)]
            fields.append({"name": name, "type": {"type": "record", "name": f"Part{index}",
                                                  "fields": inner}})
            count += 11
            index += 1
            continue
        if kind == 5:
            field_type: object = {"type": "enum", "name": f"Grade{index}",
                                  "symbols": ["LOW", "MODERATE", "HIGH"]}
        elif kind in (2, 7):
            field_type = ["null", "string"]
        elif kind % 2:
            field_type = "int"
        else:
            field_type = "string"
        fields.append({"name": name, "type": field_type})
        count += 1
        index += 1
    return {"type": "record", "name": "Wide", "namespace": "brackwater", "fields": fields}


def mutated_copy(schema: dict) -> dict:
    """The reader: promotions, new enum symbols, widened unions, renames through aliases, a
    removed field and added fields with defaults, spread over the whole record."""
    reader = copy.deepcopy(schema)
    fields = reader["fields"]
    for position, field in enumerate(fields):
        field_type = field["type"]
        if field_type == "int" and position % 3 == 0:
            field["type"] = "long"
        elif isinstance(field_type, dict) and field_type["type"] == "enum":
            field_type["symbols"].append("SEVERE")
        elif isinstance(field_type, list) and position % 4 == 2:
            field["type"] = ["null", "string", "long"]
        elif isinstance(field_type, dict) and field_type["type"] == "record":
            for inner in field_type["fields"][::3]:
                if inner["type"] == "int":
                    inner["type"] = "double"
        elif field_type == "string" and position % 7 == 0:
            field["aliases"] = [field["name"]]
            field["name"] = f"renamed_{field['name']}"
    del fields[1]
    for extra in range(50):
        fields.append({"name": f"added_{extra}", "type": "int", "default": 0})
    return reader


def workload(total_fields: int) -> dict[str, Callable[[], object]]:
    writer_json = wide_record(total_fields)
    reader_json = mutated_copy(writer_json)
    reader, writer = parse(reader_json), parse(writer_json)
    result = resolve(reader, writer)
    assert result.compatible, result.problems[:3]
    assert result.notes  # promotions, aliases and defaults were all seen
    return {
        "fastavro_parse": lambda: (fastavro.parse_schema(reader_json),
                                   fastavro.parse_schema(writer_json)),
        "check": lambda: resolve(reader, writer),
        "parse_and_check": lambda: resolve(parse(reader_json), parse(writer_json)),
    }


def workload_labels() -> tuple[str, ...]:
    return ("fastavro_parse", "check", "parse_and_check")


def test_checking_10000_fields_within_twice_fastavro_parsing_and_linear():
    actions = {f"{size} {label}": action for size in (10_000, 20_000)
               for label, action in workload(size).items()}
    best = best_times(actions)
    small = {label: best[f"10000 {label}"] for label in workload_labels()}
    large = {label: best[f"20000 {label}"] for label in workload_labels()}
    for label, numbers in (("10,000 fields", small), ("20,000 fields", large)):
        print(f"\n{label}: fastavro parse of both {numbers['fastavro_parse'] * 1000:.1f} ms, "
              f"check {numbers['check'] * 1000:.1f} ms "
              f"({numbers['check'] / numbers['fastavro_parse']:.2f}x), "
              f"parse both and check {numbers['parse_and_check'] * 1000:.1f} ms "
              f"({numbers['parse_and_check'] / numbers['fastavro_parse']:.2f}x)")
    growth = large["check"] / small["check"]
    growth_with_parse = large["parse_and_check"] / small["parse_and_check"]
    print(f"growth 20,000 vs 10,000 fields: check {growth:.2f}x, "
          f"parse and check {growth_with_parse:.2f}x")
    assert small["check"] <= 2.0 * small["fastavro_parse"]
    assert growth <= 2.3
    assert growth_with_parse <= 2.3


def nested_records(depth: int, leaf: str) -> str:
    text = "".join(f'{{"type":"record","name":"Level{level}","fields":[{{"name":"inner","type":'
                   for level in range(depth))
    return text + f'"{leaf}"' + "}]}" * depth


def test_500_deep_nesting_stays_clear_of_the_recursion_limit():
    limit = sys.getrecursionlimit()
    depth = 500  # 1,500 JSON levels: past what json.loads manages under the default limit
    old, new = load(nested_records(depth, "int")), load(nested_records(depth, "long"))
    start = time.perf_counter()
    result = resolve(new, old)
    assert result.compatible
    assert result.notes[0].path == "/fields/inner/type" * depth
    assert not resolve(old, new).compatible
    (change,) = diff(old, new).changes
    assert change.path.endswith("/fields/inner/type")
    assert canonical_form(old).count('"type":"record"') == depth
    assert len(fingerprint(old).sha256) == 64
    assert leaf_fields(old)[0].path == ".".join(["inner"] * depth)
    again = parse(to_json(new))
    assert canonical_form(again) == canonical_form(new)
    print(f"\n500-deep nesting: load, check both ways, diff, canonical form, leaves and "
          f"round trip in {(time.perf_counter() - start) * 1000:.1f} ms (after load)")
    assert sys.getrecursionlimit() == limit
