"""The design CSV (contract section 4), read against a study's route and catalogue."""

from __future__ import annotations

from pathlib import Path

from optimiser.io.errors import ProblemList
from optimiser.io.surge_inputs import has_wave_speed
from optimiser.io.tables import number, read_rows
from optimiser.model import Design, Piece, Study

DESIGN_COLUMNS = ["from_m", "to_m", "material", "dn_mm", "pressure_class"]
CHAINAGE_TOLERANCE_M = 1e-3


def load_design(path: str | Path, study: Study) -> Design:
    """Read a design CSV (contract section 4) against a study's route and catalogue.

    Options are looked up in the whole catalogue file, so a design may be checked even
    when it uses a material that ``[catalogue] materials`` leaves out of optimisation.
    """
    path = Path(path)
    rows, _ = read_rows(path, DESIGN_COLUMNS, what="design")
    problems = ProblemList()
    catalogue = study.full_catalogue or study.catalogue
    pieces: list[Piece] = []
    previous_end: float | None = None
    end = study.route.total_chainage_m
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
            problems.add(f"{path}: line {row.line}: the first piece must start at chainage "
                         f"0, not {start:g}")
        if start is not None and previous_end is not None:
            if start > previous_end + CHAINAGE_TOLERANCE_M:
                problems.add(f"{path}: line {row.line}: gap from {previous_end:g} to "
                             f"{start:g} m before this piece")
            elif start < previous_end - CHAINAGE_TOLERANCE_M:
                problems.add(f"{path}: line {row.line}: overlaps the previous piece "
                             f"(starts at {start:g}, previous ends at {previous_end:g} m)")
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
        pieces.append(Piece(start, stop, option))
    if previous_end is not None and abs(previous_end - end) > CHAINAGE_TOLERANCE_M:
        problems.add(f"{path}: line {rows[-1].line}: the last piece ends at {previous_end:g} "
                     f"m but the route ends at {end:g} m")
    problems.raise_if_any()
    # Snap to the route's exact ends and make pieces exactly contiguous.
    snapped = []
    for index, piece in enumerate(pieces):
        start = 0.0 if index == 0 else snapped[-1].to_m
        stop = end if index == len(pieces) - 1 else piece.to_m
        snapped.append(Piece(start, stop, piece.option))
    return Design(tuple(snapped))
