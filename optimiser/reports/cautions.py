"""The cautions shown with every output that feeds a design."""

CAUTIONS: tuple[str, ...] = (
    "Preliminary sizing aid only: results depend on the survey, the catalogue data and the "
    "assumptions listed; they are not a construction design.",
    "Surge and transients are not analysed; only the stated surge allowance, or a "
    "Joukowsky estimate from each pipe's wave speed, is added to static head. A transient "
    "analysis is needed before pressure classes are fixed.",
    "Air valves, washouts, thrust restraint, anchorage, pipe bedding and pressure classes "
    "at fittings need detailed design.",
    "Pressure below atmospheric anywhere on a drinking-water main risks contamination; "
    "bursts at low points endanger people and property.",
    "Follow local codes and standards; every design must be reviewed and signed by a "
    "licensed engineer before use.",
)
