#!/usr/bin/env python3
"""The JSON outputs of levelhead against docs/schema, and the one way units
are written in them.

Runs the built-in demo, a convert and a diff, then checks:
  - every summary.json, flow.json and convert's summary against
    summary.schema.json, run.json against run.schema.json (JSON Schema
    draft 2020-12, with the jsonschema package: python3-jsonschema);
  - in every JSON written, no key is named `unit` or ends in `_unit`: a
    length is in the file's `units`, any other unit is the key's suffix;
  - the schemas are not vacuous: a summary without `units`, and one whose
    test verdict is not a boolean, are refused.

Usage: check_outputs.py LEVELHEAD SCHEMA_DIR WORK_DIR
"""
import copy
import json
import pathlib
import shutil
import subprocess
import sys

import jsonschema


def run(*args):
    done = subprocess.run(args, capture_output=True, text=True)
    if done.returncode not in (0, 1, 3):
        sys.exit(f"{' '.join(map(str, args))} exited {done.returncode}:\n{done.stderr}")
    return done


def unit_keys(value, path=""):
    """Key paths named `unit` or `*_unit`."""
    found = []
    if isinstance(value, dict):
        for key, item in value.items():
            here = f"{path}.{key}" if path else key
            if key == "unit" or key.endswith("_unit"):
                found.append(here)
            found += unit_keys(item, here)
    elif isinstance(value, list):
        for i, item in enumerate(value):
            found += unit_keys(item, f"{path}[{i}]")
    return found


def main():
    levelhead, schema_dir, work = sys.argv[1], pathlib.Path(sys.argv[2]), pathlib.Path(sys.argv[3])
    shutil.rmtree(work, ignore_errors=True)
    work.mkdir(parents=True)
    demo = work / "demo"
    run(levelhead, "demo", "--out", demo)
    run(levelhead, "convert", "--from", "EPSG:5703", "--to", "EPSG:6360", "--crs", "EPSG:32613",
        "--in", demo / "inputs" / "points.csv", "--out", work / "points_ft.csv")
    run(levelhead, "diff", demo, demo, "--json", work / "diff.json")

    summary_schema = json.loads((schema_dir / "summary.schema.json").read_text())
    run_schema = json.loads((schema_dir / "run.schema.json").read_text())
    for schema in (summary_schema, run_schema):
        jsonschema.Draft202012Validator.check_schema(schema)
    summary_check = jsonschema.Draft202012Validator(summary_schema)
    run_check = jsonschema.Draft202012Validator(run_schema)

    problems = []
    summaries = sorted(demo.glob("*/summary.json")) + [demo / "flow" / "flow.json",
                                                       work / "points_ft.summary.json"]
    if len(summaries) < 9:
        problems.append(f"expected 9 summaries, found {len(summaries)}")
    for path in summaries:
        for error in summary_check.iter_errors(json.loads(path.read_text())):
            problems.append(f"{path}: {'/'.join(map(str, error.path))}: {error.message}")
    for error in run_check.iter_errors(json.loads((demo / "run.json").read_text())):
        problems.append(f"run.json: {'/'.join(map(str, error.path))}: {error.message}")

    every_json = summaries + [demo / "run.json", work / "diff.json"]
    for path in every_json:
        document = json.loads(path.read_text())
        if "format_version" not in document:
            problems.append(f"{path}: no format_version")
        for key in unit_keys(document):
            problems.append(f"{path}: key '{key}' writes a unit another way than `units` or a "
                            "key suffix")

    adjust = json.loads((demo / "adjust" / "summary.json").read_text())
    without_units = copy.deepcopy(adjust)
    del without_units["units"]
    not_boolean = copy.deepcopy(adjust)
    not_boolean["global_test"]["passed"] = "yes"
    for name, broken in (("without units", without_units), ("passed as text", not_boolean)):
        if summary_check.is_valid(broken):
            problems.append(f"the summary schema accepts an adjust summary {name}")

    if problems:
        sys.exit("\n".join(problems))
    print(f"{len(every_json)} JSON outputs: schemas and units fine")


if __name__ == "__main__":
    main()
