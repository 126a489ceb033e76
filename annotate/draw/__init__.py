"""Pictures of annotation results: one card per molecule (structure, site legend, species across pH).

Kept apart from the engine so drawing never changes an estimate and a drawing
failure never stops an annotation run.
"""

from annotate.draw.card import card_svg, write_cards

__all__ = ["card_svg", "write_cards"]
