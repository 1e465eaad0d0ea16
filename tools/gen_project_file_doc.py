"""Write docs/project-file.md from the settings dataclasses (run after changing geosect/config.py).

    python tools/gen_project_file_doc.py
"""

from __future__ import annotations

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from geosect.config import describe_keys  # noqa: E402
from geosect.report import md_escape  # noqa: E402

HEAD = """# The project file `geosect.toml`

A project is a folder with a `geosect.toml`. The file is TOML; geosect reads it with Python's `tomllib` and
checks every key: an unknown key (with a suggestion of the closest valid one), a value of the wrong type or out of
range, or a file that does not exist stops the command with exit code 2 and one message naming the key and the fix.
Paths are relative to the project folder. Nothing in the file is evaluated as code.

`geosect new DIR` writes a commented template; `geosect demo DIR` writes the synthetic sample project, whose
`geosect.toml` is a complete example.

## Example

```toml
[project]
name = "My profile"
crs = "auto"                 # UTM zone of the data; or "EPSG:32633", or WKT

[stations]
file = "stations.csv"
coordinates_crs = "EPSG:4326"
height_reference = "geoid"
[stations.columns]
id = "code"
x = "lon"
y = "lat"
elevation = "elev_m"

[line]
method = "file"
file = "road.geojson"
direction = "south-north"

[dem]
file = "dem.tif"
height_reference = "geoid"
```

## Column mapping

Tables and vector files keep their own column names; a `columns` sub-table says which column plays which role
(`[stations.columns] id = "code"`). A role that is not mapped is looked for under common names (`lon`,
`longitude`, `x`, `easting` for x; `lat`, `latitude`, `y`, `northing` for y; `elevation_m`, `elev_m`, `elevation`
for elevation; ...). CSV and TSV tables need `coordinates_crs`; vector files carry their CRS.

## Height references

Every input with heights states what they are measured from: `"geoid"` (above mean sea level) or `"ellipsoid"`.
Heights of different references are never compared without saying so.

## Every section and key
"""


def main() -> None:
    out = [HEAD]
    for sect, rows in describe_keys().items():
        title = f"[[{sect}]] (may repeat)" if sect == "horizons" else f"[{sect}]"
        out.append(f"\n### `{title}`\n")
        out.append("| key | type | default | meaning |")
        out.append("|---|---|---|---|")
        for name, tname, default, doc in rows:
            out.append(f"| `{name}` | {tname} | `{default}` | {md_escape(doc).replace(chr(92) + '_', '_')} |")
    target = Path(__file__).resolve().parents[1] / "docs" / "project-file.md"
    target.write_text("\n".join(out) + "\n")
    print(f"wrote {target}")


if __name__ == "__main__":
    main()
