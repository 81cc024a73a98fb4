"""Drawing results: the result layers in a copy of the drawing (:mod:`.writer`:
diagrams, reactions, deflected shape, mechanism), what a drawing shows
(:mod:`.selection`), the diagrams' curves (:mod:`.curves`), labels
(:mod:`.labels`), the drawing's own content as obstacles
(:mod:`.obstacles`; :mod:`.occupancy` tests many boxes against them at once), legend and notes (:mod:`.legend`), the layers' style
(:mod:`.style`) and the PNG preview (:mod:`.preview`, imported on its own:
it loads matplotlib).
"""
from .style import (
    DEFAULT_OUTPUT_LAYERS,
    LayerStyle,
    RESULT_LAYER_STYLES,
    LINETYPES,
    TEXT_STYLES,
    result_layer_names,
    prepare_layers,
    clear_result_layers,
)
from .selection import Selection, select_results
from .labels import LabelPlacer
from .obstacles import DrawingObstacles, drawing_obstacles, free_spot, keep_clear
from .further import further_layer_names, annotate_further, write_buckling_drawing
from .writer import (
    DrawingSummary,
    annotate_results,
    annotate_mechanism,
    write_result_drawing,
    write_mechanism_drawing,
)

__all__ = [
    "further_layer_names",
    "annotate_further",
    "write_buckling_drawing",
    "DEFAULT_OUTPUT_LAYERS",
    "LayerStyle",
    "RESULT_LAYER_STYLES",
    "LINETYPES",
    "TEXT_STYLES",
    "result_layer_names",
    "prepare_layers",
    "clear_result_layers",
    "Selection",
    "select_results",
    "LabelPlacer",
    "DrawingObstacles",
    "drawing_obstacles",
    "free_spot",
    "keep_clear",
    "DrawingSummary",
    "annotate_results",
    "annotate_mechanism",
    "write_result_drawing",
    "write_mechanism_drawing",
]
