"""dxf2frame: read a planar frame from a DXF drawing, solve it, and write the
results back as new layers in a copy of the drawing.

A preliminary analysis aid: results must be checked by a qualified engineer;
local building codes and licensed practice govern.
"""
__version__ = "0.1.0"

CAUTION = (
    "Preliminary analysis aid only. Results must be checked by a qualified "
    "engineer; local building codes and licensed practice govern."
)
