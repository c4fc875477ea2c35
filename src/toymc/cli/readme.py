"""Private: refresh the generated tables of README.md (``python -m toymc.cli.readme``).

The config reference comes from :data:`toymc.config.schema.SCHEMA`, the [selection],
[tuning] and [backgrounds] reference from the schemas of their readers, the
geometry reference from :data:`toymc.detector.geometry.GEOMETRY_SCHEMA`, the
toy bounds from :data:`toymc.config.ranges.LIMITS` and the column table from
:func:`toymc.io.columns.all_columns`; tests/test_docs.py checks that the README
lists every key and column.
"""

import re
import sys
from pathlib import Path

from toymc.config import ranges
from toymc.config.schema import schema_markdown
from toymc.io.columns import markdown


def section_markdown():
    """[selection], [tuning] and [backgrounds]: key, type, unit, default, allowed, meaning."""
    from toymc.analysis.tuning import TUNING_RANGE_SCHEMA, TUNING_SCHEMA
    from toymc.detector.geometry import SELECTION_SCHEMA
    from toymc.engine.backgrounds import BACKGROUND_SCHEMA

    rows = list(SELECTION_SCHEMA.items())
    rows += [(f"tuning.{k}", s) for k, s in TUNING_SCHEMA.items()]
    rows += [(f"tuning.r_min.{k}", s) for k, s in TUNING_RANGE_SCHEMA.items()]
    rows += [(f"backgrounds.{k}", s) for k, s in BACKGROUND_SCHEMA.items()]
    return ranges.markdown(rows)


def geometry_markdown():
    from toymc.detector.geometry import GEOMETRY_SCHEMA

    return ranges.markdown(GEOMETRY_SCHEMA.items())


def tables():
    """{marker name: generated Markdown table}."""
    return {"config-table": schema_markdown(), "section-table": section_markdown(),
            "geometry-table": geometry_markdown(), "limits-table": ranges.limits_markdown(),
            "column-table": markdown()}


def refresh(text):
    for name, table in tables().items():
        text = re.sub(rf"<!-- {name} -->.*?<!-- /{name} -->",
                      f"<!-- {name} -->\n{table}\n<!-- /{name} -->", text, flags=re.S)
    return text


if __name__ == "__main__":
    path = Path(sys.argv[1] if len(sys.argv) > 1 else "README.md")
    path.write_text(refresh(path.read_text()))
