#!/usr/bin/env python3
"""Validates eigenlog JSON documents against docs/schema/COMMAND.schema.json.

usage: validate_json.py SCHEMA_DIR COMMAND FILE [--lines]
FILE holds one document, or (--lines) one document per line (survey's JSON
lines; a line with a top-level "survey_error" is checked for that shape
instead). Exit 0 when every document validates, 1 and the first error else.
Uses python3-jsonschema from Debian (draft 2020-12)."""
import json
import os
import sys

import jsonschema

# The schemas' $id base: a reserved .invalid name (RFC 6761), never fetched.
BASE = "https://eigenlog.invalid/schema/"


def load_store(schema_dir):
    store = {}
    for name in sorted(os.listdir(schema_dir)):
        if name.endswith(".schema.json"):
            with open(os.path.join(schema_dir, name), encoding="utf-8") as f:
                schema = json.load(f)
            jsonschema.Draft202012Validator.check_schema(schema)
            store[schema["$id"]] = schema
    return store


def main():
    schema_dir, command, path = sys.argv[1:4]
    lines = "--lines" in sys.argv[4:]
    store = load_store(schema_dir)
    schema = store[BASE + command + ".schema.json"]
    resolver = jsonschema.RefResolver.from_schema(schema, store=store)
    validator = jsonschema.Draft202012Validator(schema, resolver=resolver)
    with open(path, encoding="utf-8") as f:
        texts = [t for t in f.read().splitlines() if t.strip()] if lines else [f.read()]
    for i, text in enumerate(texts):
        doc = json.loads(text)
        if lines and "survey_error" in doc:
            err = doc["survey_error"]
            if not isinstance(err.get("file"), str) or not isinstance(err.get("exit_code"), int):
                print(f"{path}:{i + 1}: survey_error without file/exit_code", file=sys.stderr)
                return 1
            continue
        errors = sorted(validator.iter_errors(doc), key=lambda e: list(e.path))
        if errors:
            e = errors[0]
            where = "/".join(str(p) for p in e.path)
            print(f"{path}:{i + 1}: {command} schema: at /{where}: {e.message}", file=sys.stderr)
            return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
