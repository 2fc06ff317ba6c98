"""Check scene files against the scene file's JSON Schema with a general-purpose validator.

The validator is the `jsonschema` package's Draft 2020-12 validator (JSON Schema draft 2020-12,
json-schema.org), not our own code: the Rust test `crates/app/tests/scene_schema.rs` runs this
script to show that every sample scene validates against `docs/scene.schema.json` and that a set
of broken scenes does not.

Usage: check_scene_schema.py SCHEMA FILE...
Prints one JSON list: for each file {"file", "valid", "error"} (the first error's message).
"""

import json
import sys

from jsonschema import Draft202012Validator


def main() -> None:
    with open(sys.argv[1], encoding="utf-8") as handle:
        schema = json.load(handle)
    # A schema that is not itself valid draft 2020-12 fails here, before any file is checked.
    Draft202012Validator.check_schema(schema)
    validator = Draft202012Validator(schema)
    results = []
    for path in sys.argv[2:]:
        with open(path, encoding="utf-8") as handle:
            document = json.load(handle)
        errors = sorted(validator.iter_errors(document), key=lambda e: list(e.absolute_path))
        results.append(
            {
                "file": path,
                "valid": not errors,
                "error": errors[0].message if errors else None,
            }
        )
    print(json.dumps(results))


if __name__ == "__main__":
    main()
