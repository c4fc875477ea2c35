"""Private: refresh the generated tables of README.md (``python -m toymc._readme``).

The config reference comes from :data:`toymc.config.SCHEMA`, the column table
from :func:`toymc.columns.all_columns`; tests/test_docs.py checks that the
README lists every key and column.
"""

import re
import sys
from pathlib import Path

from .columns import markdown
from .config import schema_markdown


def refresh(text):
    for name, table in (("config-table", schema_markdown()), ("column-table", markdown())):
        text = re.sub(rf"<!-- {name} -->.*?<!-- /{name} -->",
                      f"<!-- {name} -->\n{table}\n<!-- /{name} -->", text, flags=re.S)
    return text


if __name__ == "__main__":
    path = Path(sys.argv[1] if len(sys.argv) > 1 else "README.md")
    path.write_text(refresh(path.read_text()))
