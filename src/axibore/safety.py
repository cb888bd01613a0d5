"""The cautions every result that can load a part carries (printed, in summary.json, in the report)."""

CAUTIONS = (
    "Hydrodynamic load only: steady, inviscid flow of the fluid on the part.",
    "Bolt preload, gasket loads, water hammer and other transients, fatigue and code allowables are outside this result.",
    "Defer to the applicable codes and to licensed engineering practice before sizing bolts or thrust restraints.",
)


def caution_text() -> str:
    return "Caution: " + " ".join(CAUTIONS)
