"""The cautions every report carries (DESIGN.md section 5)."""

CAUTION = (
    "This check covers the statics of an idealised pin-jointed truss model only: joint loads, "
    "axial member forces and reactions. It does not check member capacity, buckling, connections, "
    "secondary (bending) moments, fatigue or dynamic effects. Results must be reviewed by a "
    "qualified, licensed engineer under the governing local codes."
)
