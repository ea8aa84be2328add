"""Atomic JSON writing for the fixture scripts of testdata/.

Import it from a script in a folder of testdata/ with

    sys.path.insert(0, os.path.join(HERE, ".."))
    from jsonfile import write_json
"""
import json
import os


def write_json(path, obj, indent=1):
    """Write obj to path as JSON (indent spaces a level) and a newline,
    through a temporary file that is flushed and renamed into place."""
    tmp = path + ".tmp"
    with open(tmp, "w") as f:
        json.dump(obj, f, indent=indent)
        f.write("\n")
        f.flush()
        os.fsync(f.fileno())
    os.replace(tmp, path)
