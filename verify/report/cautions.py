"""The cautions every report carries (DESIGN.md section 5)."""

CAUTION = (
    "This check covers the statics of an idealised pin-jointed truss model only: joint loads, "
    "axial member forces and reactions. It does not check member capacity, buckling, connections, "
    "secondary (bending) moments, fatigue or dynamic effects. Results must be reviewed by a "
    "qualified, licensed engineer under the governing local codes."
)

# Beside the verdict at the top of a long report; the full CAUTION closes it.
SHORT_CAUTION = (
    "Statics of an idealised pin-jointed model only (no capacity, buckling, connections or "
    "secondary moments); a qualified engineer must review these results under the governing local codes."
)
