"""The design CSV (contract section 4), read against a study's route and catalogue.

For a scheme (contract section 7) an optional ``branch`` column (default ``"main"``)
says which branch each piece lies on; each branch's pieces are contiguous from its
chainage 0 to its last chainage, in file order.
"""

from __future__ import annotations

from pathlib import Path

from optimiser.io.errors import ProblemList
from optimiser.io.surge_inputs import has_wave_speed
from optimiser.io.tables import Row, number, read_rows
from optimiser.model import Design, Piece, Study
from optimiser.model.scheme import TRUNK

DESIGN_COLUMNS = ["from_m", "to_m", "material", "dn_mm", "pressure_class"]
BRANCH_COLUMN = "branch"
CHAINAGE_TOLERANCE_M = 1e-3


def design_csv_columns(study: Study, columns: list[str]) -> list[str]:
    """The columns ``design`` writes: ``branch`` first for a scheme, then ``columns``;
    a single route keeps ``columns`` unchanged."""
    return [BRANCH_COLUMN, *columns] if study.is_scheme else list(columns)


def load_design(path: str | Path, study: Study) -> Design:
    """Read a design CSV (contract section 4) against a study's route and catalogue.

    Options are looked up in the whole catalogue file, so a design may be checked even
    when it uses a material that ``[catalogue] materials`` leaves out of optimisation.
    """
    path = Path(path)
    rows, _ = read_rows(path, DESIGN_COLUMNS, [BRANCH_COLUMN], what="design")
    problems = ProblemList()
    by_branch = _rows_by_branch(path, study, rows, problems)
    pieces: list[Piece] = []
    for name in study.branch_names:
        branch_rows = by_branch.get(name, [])
        end = _end_m(study, name)
        if not branch_rows:
            if name != TRUNK or study.is_scheme:
                problems.add(f"{path}: no piece is on branch {name!r} (column "
                             f"{BRANCH_COLUMN}); every branch needs its pieces from 0 to "
                             f"{end:g} m")
            continue
        pieces.extend(_branch_pieces(path, study, name, branch_rows, end, problems))
    problems.raise_if_any()
    return Design(tuple(pieces))


def _end_m(study: Study, name: str) -> float:
    route = study.route if name == TRUNK else study.branch(name).route
    return route.total_chainage_m


def _rows_by_branch(path: Path, study: Study, rows: list[Row],
                    problems: ProblemList) -> dict[str, list[Row]]:
    """Rows grouped by their branch (empty cell: the trunk); unknown branches reported."""
    known = set(study.branch_names)
    grouped: dict[str, list[Row]] = {}
    for row in rows:
        name = row.cells.get(BRANCH_COLUMN, "") or TRUNK
        if name not in known:
            problems.add(f"{path}: line {row.line}: column {BRANCH_COLUMN}: the study has no "
                         f"branch {name!r} (it has {', '.join(map(repr, study.branch_names))})")
            continue
        grouped.setdefault(name, []).append(row)
    return grouped


def _branch_pieces(path: Path, study: Study, branch: str, rows: list[Row], end: float,
                   problems: ProblemList) -> list[Piece]:
    """The pieces of one branch, contiguous from 0 to ``end``, snapped to its ends."""
    catalogue = study.full_catalogue or study.catalogue
    on = "" if branch == TRUNK and not study.is_scheme else f" of branch {branch!r}"
    pieces: list[Piece] = []
    previous_end: float | None = None
    for index, row in enumerate(rows):
        start = number(path, row, "from_m", problems)
        stop = number(path, row, "to_m", problems)
        dn = number(path, row, "dn_mm", problems, positive=True)
        material = row.cells["material"]
        pressure_class = row.cells["pressure_class"]
        for column in ("material", "pressure_class"):
            if not row.cells[column]:
                problems.add(f"{path}: line {row.line}: column {column} is empty")
        if index == 0 and start is not None and abs(start) > CHAINAGE_TOLERANCE_M:
            problems.add(f"{path}: line {row.line}: the first piece{on} must start at "
                         f"chainage 0, not {start:g}")
        _continuity(path, row, start, previous_end, problems)
        if start is not None and stop is not None and stop <= start:
            problems.add(f"{path}: line {row.line}: the piece from {start:g} to {stop:g} m "
                         "has zero or negative length")
        # A piece of no length leaves no end to continue from: do not also report a gap.
        previous_end = stop if start is None or stop is None or stop > start else None
        if start is None or stop is None or dn is None or not material \
                or not pressure_class:
            continue
        option = catalogue.find(material, dn, pressure_class)
        if option is None:
            problems.add(f"{path}: line {row.line}: {material} DN{dn:g} {pressure_class} is "
                         f"not in the catalogue {study.catalogue_path}")
            continue
        if study.surge.method == "joukowsky" and not has_wave_speed(option):
            problems.add(f"{path}: line {row.line}: {option.label} has no wave_speed_m_s "
                         f"(nor wall_thickness_mm with elastic_modulus_gpa) in "
                         f"{study.catalogue_path}; [surge] method \"joukowsky\" needs it")
        pieces.append(Piece(start, stop, option, branch))
    if previous_end is not None and abs(previous_end - end) > CHAINAGE_TOLERANCE_M:
        what = "the route" if not on else f"branch {branch!r}"
        problems.add(f"{path}: line {rows[-1].line}: the last piece{on} ends at "
                     f"{previous_end:g} m but {what} ends at {end:g} m")
    # Snap to the branch's exact ends and make pieces exactly contiguous.
    snapped: list[Piece] = []
    for index, piece in enumerate(pieces):
        start = 0.0 if index == 0 else snapped[-1].to_m
        stop = end if index == len(pieces) - 1 else piece.to_m
        snapped.append(Piece(start, stop, piece.option, branch))
    return snapped


def _continuity(path: Path, row: Row, start: float | None, previous_end: float | None,
                problems: ProblemList) -> None:
    if start is None or previous_end is None:
        return
    if start > previous_end + CHAINAGE_TOLERANCE_M:
        problems.add(f"{path}: line {row.line}: gap from {previous_end:g} to "
                     f"{start:g} m before this piece")
    elif start < previous_end - CHAINAGE_TOLERANCE_M:
        problems.add(f"{path}: line {row.line}: overlaps the previous piece "
                     f"(starts at {start:g}, previous ends at {previous_end:g} m)")
