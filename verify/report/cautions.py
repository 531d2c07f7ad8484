"""The cautions every output carries (DESIGN.md section 5), in one wording.

README.md quotes CAUTION word for word (a test holds them together); reports put SHORT_CAUTION
beside the verdict and CAUTION at the end; ELASTIC_CAUTION stands wherever forces or deflections
from the member stiffness are shown.
"""

CAUTION = (
    "This check covers the statics of an idealised pin-jointed truss model only: joint loads, "
    "axial member forces and reactions. It does not check member capacity, buckling, connections, "
    "secondary (bending) moments, fatigue or dynamic effects. Results must be reviewed by a "
    "qualified, licensed engineer under the governing local codes."
)

# Beside the verdict at the top of a long report; the full CAUTION closes it.
SHORT_CAUTION = (
    "Statics of an idealised pin-jointed model only: no capacity, buckling, connections, secondary "
    "moments, fatigue or dynamic effects. A qualified, licensed engineer must review these results "
    "under the governing local codes."
)

ELASTIC_CAUTION = (
    "Elastic results depend on the EA given for each member and ignore joint slip, bolt-hole "
    "clearance and camber."
)
