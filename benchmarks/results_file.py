"""Shared by the benchmark scripts: each rewrites only its own marked section of
``benchmarks/RESULTS.md`` and keeps the rest of the file as it is."""

from __future__ import annotations

from pathlib import Path


def update_section(path: Path, name: str, text: str) -> None:
    """Put ``text`` between ``<!-- name:start -->`` and ``<!-- name:end -->`` (appended
    when the markers are missing)."""
    start, end = f"<!-- {name}:start -->", f"<!-- {name}:end -->"
    block = f"{start}\n{text.strip()}\n{end}"
    existing = path.read_text(encoding="utf-8") if path.exists() else "# Benchmark results\n"
    if start in existing and end in existing:
        head, rest = existing.split(start, 1)
        _, tail = rest.split(end, 1)
        updated = head + block + tail
    else:
        updated = existing.rstrip("\n") + "\n\n" + block + "\n"
    temporary = path.with_suffix(".md.tmp")
    temporary.write_text(updated, encoding="utf-8")
    temporary.replace(path)
