"""Validates every request-body example of the OpenAPI document against its schema.

Usage: python .ci/check_examples.py openapi/openapi.json
Uses the `jsonschema` package (JSON Schema 2020-12, the dialect of OpenAPI 3.1), which
.ci/fuzz.sh installs into its virtualenv beside schemathesis. The examples are also posted to the running
service by the end-to-end test `openapi::request_examples_answer_200`.
"""

import json
import sys

from jsonschema import Draft202012Validator


def main(path: str) -> int:
    with open(path, encoding="utf-8") as f:
        doc = json.load(f)
    checked = 0
    failures = 0
    for route, item in doc.get("paths", {}).items():
        for method, op in item.items():
            content = (op.get("requestBody") or {}).get("content", {}).get("application/json")
            if not content:
                continue
            # `#/components/...` references resolve against this root.
            schema = {"components": doc.get("components", {}), **content["schema"]}
            validator = Draft202012Validator(schema)
            for name, example in content.get("examples", {}).items():
                errors = list(validator.iter_errors(example["value"]))
                checked += 1
                for e in errors:
                    failures += 1
                    print(f"{method.upper()} {route} example {name}: {e.json_path}: {e.message}")
    print(f"examples: {checked} checked against their schemas, {failures} errors")
    return 1 if failures or checked == 0 else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
