"""Pictures of annotation results: one card per molecule (structure, site legend, species across pH).

Kept apart from the engine so drawing never changes an estimate and a drawing
failure never stops an annotation run.
"""

from annotate.draw.card import GRID, card_svg, species_curves, species_label, write_card, write_cards

__all__ = ["GRID", "species_curves", "card_svg", "species_label", "write_card", "write_cards"]
