#!/usr/bin/python3
"""Writes the fuzz targets' seed corpora into tests/fuzz/corpus/<target>/.

The seeds are the tests' own inputs: the coefficient sets of the scorer and
daemon tests, the sample production config and configs the daemon tests
write, the CSV texts of the CSV tests, and Score / ScoreBatch /
ReportOutcomes requests from the bad-input tests, serialized as protobuf
bytes (the form they arrive in). The output is committed; run this again
(with the Python package built: cmake --build build --target
plumbline_python) only when the schemas or the tests change:

    /usr/bin/python3 tests/fuzz/make_seeds.py [--build-dir build]
"""

import argparse
import hashlib
import json
import pathlib
import re
import shutil
import sys

ROOT = pathlib.Path(__file__).resolve().parents[2]


def cxx_raw_string(path, name):
    """The R"json(...)json" literal called `name` in a C++ header."""
    text = (ROOT / path).read_text()
    match = re.search(name + r'\[\] = R"(\w*)\((.*?)\)\1"', text, re.S)
    if not match:
        sys.exit(f"make_seeds: {name} not found in {path}")
    return match.group(2)


def courier_set(name="courier", version="v1"):
    """tests/testing/test_sets.cc's CourierSetJson, written out."""
    return json.dumps({
        "name": name, "version": version, "intercept": -1.5,
        "features": [
            {"name": "distance_km",
             "numeric": {"center": 5, "scale": 2.5, "clip_low": 0,
                         "clip_high": 40, "coefficient": 0.8}},
            {"name": "parcel_kg",
             "numeric": {"center": 2, "scale": 1, "coefficient": 0.3},
             "missing": {"kind": "IMPUTE", "impute_number": 3}},
            {"name": "region",
             "categorical": {"levels": [
                 {"value": "urban", "coefficient": -0.4},
                 {"value": "suburban", "coefficient": 0.1},
                 {"value": "rural", "coefficient": 0.9}],
                 "reference_level": "suburban"},
             "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.25}},
            {"name": "service",
             "categorical": {"levels": [
                 {"value": "standard", "coefficient": 0},
                 {"value": "express", "coefficient": -0.3}],
                 "unseen": "UNSEEN_AS_MISSING"},
             "missing": {"kind": "IMPUTE", "impute_level": "standard"}},
            {"name": "hour",
             "binned": {"edges": [9, 12, 17],
                        "coefficients": [0.2, -0.1, 0, 0.5], "reference": 13},
             "missing": {"kind": "INDICATOR", "indicator_coefficient": 0.4}},
        ],
        "score_baseline": {"edges": [0.2, 0.5], "proportions": [0.3, 0.5, 0.2]},
    }, indent=1)


def write(target, items):
    out = ROOT / "tests" / "fuzz" / "corpus" / target
    shutil.rmtree(out, ignore_errors=True)
    out.mkdir(parents=True)
    for data in items:
        if isinstance(data, str):
            data = data.encode()
        digest = hashlib.sha1(data).hexdigest()[:16]
        (out / digest).write_bytes(data)
    print(f"{target}: {len(items)} seeds")


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--build-dir", default="build")
    args = parser.parse_args()
    sys.path.insert(0, str(ROOT / args.build_dir / "proto" / "python"))
    from google.protobuf import json_format
    from plumbline.v1 import outcomes_pb2, scoring_pb2

    all_transforms = cxx_raw_string("tests/scorer/test_sets.h",
                                    "kAllTransformsSetJson")
    sets = [all_transforms, courier_set(), courier_set("depot", "2026-12-01.1")]
    # The sets again, each followed by a NUL and bytes that pick a record.
    write("fuzz_coefficient_set",
          sets + [s + "\0" + "\x01\x02\x03\x00\xff" * 8 for s in sets])

    def request(message, text):
        return json_format.Parse(text, message()).SerializeToString()

    score = [
        '{"set": "courier_test", "record": {"features": {"distance_km": 9}}}',
        '{"set": "courier_test", "record": {"recordId": "r1", "features": '
        '{"distance_km": 3.5, "weight_kg": null, "building": "flat", '
        '"hour": 13, "rain_mm": 0.2}}, "reasons": {"top": 3}}',
        '{"set": "courier_test", "record": {"features": {"building": '
        '"castle", "hour": "noon", "weight_kg": true}}, '
        '"reasons": {"top": 2, "order": "MAGNITUDE"}}',
        '{"set": "courier_test", "record": {"features": {"rain_mm": '
        '{"nested": [1, 2]}, "regoin": "rural"}}}',
    ]
    write("fuzz_record_conversion",
          [request(scoring_pb2.ScoreRequest, s) for s in score])

    batch = [
        '{"set": "courier_test", "records": [{"features": {"distance_km": 1,'
        ' "hour": 8, "rain_mm": 0}}, {"recordId": "b2", "features": '
        '{"hour": 20, "rain_mm": 1, "building": "office"}}]}',
        '{"set": "courier_test", "reasons": {"top": 2}, "dense": {"rows": ['
        '{"recordId": "d0", "values": [9, 3, 2, 10, 0]}, '
        '{"values": [1, 0, 0, 18, 0.5]}]}}',
        '{"set": "courier_test", "dense": {"columns": ["hour", "rain_mm", '
        '"building"], "nanIsMissing": true, "rows": [{"values": '
        '[12, "NaN", 1]}]}}',
        '{"set": "courier_test", "dense": {"columns": ["hour", "hour"], '
        '"rows": [{"values": [1, 2]}]}}',
    ]
    write("fuzz_dense_batch",
          [request(scoring_pb2.ScoreBatchRequest, s) for s in batch])

    outcomes = [
        '{"outcomes": [{"recordId": "p-1", "label": 1}, {"recordId": "p-2", '
        '"label": 0, "observedAt": "2026-12-01T08:30:00Z"}]}',
        '{"outcomes": [{"recordId": "", "label": 7}, {"recordId": '
        '"1796113800.25", "label": 1, "observedAt": "0001-01-01T00:00:00Z"}]}',
        '{"outcomes": [{"recordId": "2026-12-01T09:30:00.25+01:00", '
        '"label": 0}, {"recordId": " 1 ", "label": 1}]}',
    ]
    write("fuzz_outcomes",
          [request(outcomes_pb2.ReportOutcomesRequest, s) for s in outcomes])

    write("fuzz_config", [
        (ROOT / "ops/config/plumbd.production.json").read_text(),
        '{"max_batch_records": 3, "max_reasons": 2, "ledger_path": "l.db"}',
        '{"listen": "127.0.0.1:0", "log": {"format": "JSON_LINES"}, '
        '"security": {"access": {"tokens": [{"name": "router", "role": '
        '"SCORE", "id": "0123456789ab", "hash": "pbkdf2-sha256$10000$'
        'c2FsdHNhbHRzYWx0c2FsdA==$a2V5a2V5a2V5a2V5a2V5a2V5a2V5a2V5a2V5a2U="}'
        '], "subjects": [{"common_name": "router-1", "role": "ADMIN"}]}}}',
        '{"metrics_listen": "0.0.0.0:0", "security": '
        '{"allow_unauthenticated_metrics_non_loopback": true}, '
        '"windows": {"labelled_count": 10, "buckets": 2}, "drift_policy": '
        '{"min_labelled": 5, "tick_seconds": 1}, "refit": {}}',
    ])

    write("fuzz_csv", [
        'id,note,n\r\n1,"says ""hi"", then, leaves",2\r\n'
        '2,"two\nlines",\r\n\n3,,7',
        "\ufeffx,y\n1,2\n",
        "a,b\n1,\"open\n",
        "record_id,distance_km,weight_kg,building,hour,rain_mm\n"
        "p-1,4.2,,flat,13,0\np-2,x,1,house,8,1e3\n",
        "record_id,label,observed_at\np-1,1,2026-12-01T08:30:00Z\n"
        "p-2,0,\n",
    ])


if __name__ == "__main__":
    main()
