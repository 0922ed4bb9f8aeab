"""Print the first ```python block after a README heading: ``python .ci/readme_block.py README.md "Python API"``."""
import pathlib
import sys

lines = pathlib.Path(sys.argv[1]).read_text(encoding="utf-8").splitlines()
heading = sys.argv[2]
start = next(i for i, line in enumerate(lines) if line.startswith("#") and line.lstrip("#").strip() == heading)
opened = next(i for i in range(start + 1, len(lines)) if lines[i].strip() == "```python")
closed = next(i for i in range(opened + 1, len(lines)) if lines[i].strip() == "```")
print("\n".join(lines[opened + 1:closed]))
