#!/usr/bin/env python3
"""The plain alternative gapcert's folder audit is measured against (SPEC §8): walk a
folder and json.load every .json file in it, nothing more. usage: walk_and_load.py FOLDER"""
import json
import os
import sys

loaded = 0
for folder, _, files in os.walk(sys.argv[1]):
    for name in files:
        if name.endswith(".json"):
            with open(os.path.join(folder, name)) as handle:
                json.load(handle)
            loaded += 1
print(loaded, file=sys.stderr)
