"""Rewrite the demo survey in this folder: ``python demo_data/make_demo.py``.

The generator itself is :mod:`profiles.demo_survey` (so that ``profiles demo`` works from an
installed package); this script writes its output next to itself, byte for byte the same as
the committed files.
"""

from pathlib import Path

from profiles.demo_survey import write_demo

if __name__ == "__main__":
    for path in write_demo(Path(__file__).resolve().parent).values():
        print(path)
