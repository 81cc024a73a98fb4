"""Drawing results: the result layers in a copy of the drawing (diagrams,
labels, legend, reactions, deflected shape, mechanism) and the PNG preview
(:mod:`.preview`, imported on its own: it loads matplotlib).
"""
from .writer import (  # noqa: F401
    DEFAULT_OUTPUT_LAYERS,
    LayerStyle,
    RESULT_LAYER_STYLES,
    LINETYPES,
    TEXT_STYLES,
    LabelPlacer,
    Selection,
    DrawingSummary,
    result_layer_names,
    select_results,
    prepare_layers,
    clear_result_layers,
    annotate_results,
    annotate_mechanism,
    write_result_drawing,
    write_mechanism_drawing,
)

__all__ = [
    "DEFAULT_OUTPUT_LAYERS",
    "LayerStyle",
    "RESULT_LAYER_STYLES",
    "LINETYPES",
    "TEXT_STYLES",
    "LabelPlacer",
    "Selection",
    "DrawingSummary",
    "result_layer_names",
    "select_results",
    "prepare_layers",
    "clear_result_layers",
    "annotate_results",
    "annotate_mechanism",
    "write_result_drawing",
    "write_mechanism_drawing",
]
