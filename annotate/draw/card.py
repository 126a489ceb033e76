"""Molecule card: 2D structure with numbered site markers, a legend table, a species-across-pH plot.

Why this look: a chemist auditing an estimate needs to find each site on the
structure and read its pKa and largest term beside it; numbered neutral markers
with a legend keep the structure readable. Species fractions come from the same
microstate model as the tables, evaluated on a pH grid (``annotate_smiles`` with
``Settings.ph`` set to the grid), so the plot and the text output cannot disagree.
"""

from __future__ import annotations

import html
from collections.abc import Iterable, Sequence
from dataclasses import replace
from pathlib import Path

from rdkit import Chem
from rdkit.Chem import rdDepictor
from rdkit.Chem.Draw import rdMolDraw2D

from annotate.engine import annotate_smiles
from annotate.results import MoleculeResult, Site
from annotate.settings import Settings

GRID = tuple(i / 4 for i in range(57))  # pH 0..14 in steps of 0.25
SHOWN_FRACTION = 0.02  # species never above this anywhere on the grid are left out of the plot
INK, GREY, PAPER = "#222222", "#8a8a8a", "#ffffff"
LINE_STYLES = ("", "6,3", "2,3", "8,3,2,3", "1,2")  # told apart by dash as well as shade
SHADES = ("#222222", "#555555", "#888888", "#aaaaaa")
WIDTH, STRUCT = 1000, 320


def _esc(text: object) -> str:
    return html.escape(str(text), quote=True)


def _largest_term(site: Site) -> str:
    """The shift that moves the pKa most from its parent value (the parent itself if none)."""
    shifts = site.terms[1:]
    if not shifts:
        return f"{site.terms[0].label} {site.terms[0].value:.2f}"
    term = max(shifts, key=lambda t: abs(t.value))
    return f"{term.label} {term.value:+.2f}"


def _structure(parent_smiles: str, sites: Sequence[Site]) -> str:
    """RDKit depiction with a small grey numbered note at each site atom (no colour, no pKa)."""
    mol = Chem.MolFromSmiles(parent_smiles)
    if mol is None:
        raise ValueError(f"cannot depict parent {parent_smiles!r}")
    rdDepictor.Compute2DCoords(mol)
    numbers: dict[int, list[str]] = {}
    for number, site in enumerate(sites, start=1):
        numbers.setdefault(site.atom, []).append(str(number))
    for atom, labels in numbers.items():
        mol.GetAtomWithIdx(atom).SetProp("atomNote", "(" + ",".join(labels) + ")")
    drawer = rdMolDraw2D.MolDraw2DSVG(STRUCT, STRUCT)
    options = drawer.drawOptions()
    options.useBWAtomPalette()
    options.annotationFontScale = 0.8
    options.maxFontSize = 18  # small molecules otherwise get huge letters
    options.fixedBondLength = 34
    options.clearBackground = False
    drawer.DrawMolecule(mol)
    drawer.FinishDrawing()
    svg = drawer.GetDrawingText()
    body = svg[svg.index(">", svg.index("<svg")) + 1 : svg.rindex("</svg>")]
    return f'<g transform="translate(10,40)">{body}</g>'


def _legend(sites: Sequence[Site], x: int, y: int) -> tuple[str, int]:
    rows = ['<g font-family="sans-serif" font-size="11" fill="#222222">']
    header = ("#", "group", "kind", "pKa ± sd", "largest term")
    cols = (0, 18, 200, 240, 330)
    for col, text in zip(cols, header, strict=True):
        rows.append(f'<text x="{x + col}" y="{y}" font-weight="bold">{_esc(text)}</text>')
    rows.append(f'<line x1="{x}" y1="{y + 4}" x2="{WIDTH - 10}" y2="{y + 4}" stroke="{GREY}"/>')
    if not sites:
        rows.append(f'<text x="{x}" y="{y + 20}">no ionizable sites found</text>')
    for i, site in enumerate(sites, start=1):
        row_y = y + 6 + 16 * i
        kind = "acid" if site.kind == "acid" else "base"
        cells = (str(i), site.group[:32], kind, f"{site.pka:.2f} ± {site.pka_sd:.2f}", _largest_term(site)[:52])
        for col, text in zip(cols, cells, strict=True):
            rows.append(f'<text x="{x + col}" y="{row_y}">{_esc(text)}</text>')
    rows.append("</g>")
    return "".join(rows), y + 6 + 16 * max(1, len(sites))


def species_label(charge: int, protonated: Sequence[bool]) -> str:
    """Charge and the sites that carry their extra proton, e.g. '+1, H on 2 3'."""
    on = [str(i) for i, p in enumerate(protonated, start=1) if p]
    signed = f"{charge:+d}" if charge else "0"
    return f"{signed}, H on {' '.join(on) if on else 'none'}" if protonated else signed


def species_curves(smiles: str, settings: Settings) -> dict[tuple[int, tuple[bool, ...]], list[float]]:
    """Fraction of each microspecies on GRID, keyed by (charge, protonation pattern)."""
    grid_settings = replace(settings, ph=GRID, min_fraction=0.0, max_species=64)
    result = annotate_smiles(smiles, settings=grid_settings)
    curves: dict[tuple[int, tuple[bool, ...]], list[float]] = {}
    for i, state in enumerate(result.ph_states):
        for sp in state.species:
            curves.setdefault((sp.charge, sp.protonated), [0.0] * len(GRID))[i] += sp.fraction
    return {k: v for k, v in curves.items() if max(v) >= SHOWN_FRACTION}


def _plot(smiles: str, settings: Settings, x: int, y: int) -> tuple[str, int]:
    """Species fractions vs pH, chosen pH values as dashed verticals, labels at each curve's peak."""
    w, h = 400, 200
    curves = species_curves(smiles, settings)
    parts = [f'<g font-family="sans-serif" font-size="10" fill="{INK}">',
             f'<text x="{x}" y="{y - 16}" font-size="12" font-weight="bold">species fraction across pH</text>',
             f'<rect x="{x}" y="{y}" width="{w}" height="{h}" fill="none" stroke="{GREY}"/>']

    def px(ph: float) -> float:
        return x + w * ph / 14

    def py(f: float) -> float:
        return y + h * (1 - f)

    for ph in range(0, 15, 2):
        parts.append(f'<text x="{px(ph):.1f}" y="{y + h + 12}" text-anchor="middle">{ph}</text>')
    for f in (0, 0.5, 1):
        parts.append(f'<text x="{x - 4}" y="{py(f) + 3:.1f}" text-anchor="end">{f:g}</text>')
    parts.append(f'<text x="{x + w / 2}" y="{y + h + 26}" text-anchor="middle">pH</text>')
    for ph in settings.ph:
        if 0 <= ph <= 14:
            parts.append(f'<line x1="{px(ph):.1f}" y1="{y}" x2="{px(ph):.1f}" y2="{y + h}" stroke="{GREY}" stroke-dasharray="3,3"/>')
            parts.append(f'<text x="{px(ph):.1f}" y="{y + 10}" text-anchor="middle" fill="{GREY}">pH {ph:g}</text>')
    ordered = sorted(curves.items(), key=lambda kv: -kv[0][0])  # most positive first
    legend_y = y
    for n, ((charge, pattern), values) in enumerate(ordered):
        shade, dash = SHADES[n % len(SHADES)], LINE_STYLES[n % len(LINE_STYLES)]
        points = " ".join(f"{px(ph):.1f},{py(v):.1f}" for ph, v in zip(GRID, values, strict=True))
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        parts.append(f'<polyline points="{points}" fill="none" stroke="{shade}" stroke-width="1.6"{dash_attr}/>')
        peak = max(range(len(GRID)), key=values.__getitem__)
        parts.append(f'<text x="{px(GRID[peak]):.1f}" y="{py(values[peak]) - 3:.1f}" text-anchor="middle">{n + 1}</text>')
        lx = x + w + 12
        parts.append(f'<line x1="{lx}" y1="{legend_y + 8}" x2="{lx + 18}" y2="{legend_y + 8}" stroke="{shade}" stroke-width="1.6"{dash_attr}/>')
        parts.append(f'<text x="{lx + 22}" y="{legend_y + 11}">{n + 1}: {_esc(species_label(charge, pattern))}</text>')
        legend_y += 14
    parts.append("</g>")
    return "".join(parts), y + h + 30


def card_svg(smiles: str, *, id: str = "", settings: Settings | None = None,
             result: MoleculeResult | None = None) -> str:
    """One SVG card; never raises for a bad molecule: the card then shows the message instead."""
    settings = settings or Settings()
    title = f"{id}  {smiles}" if id else smiles
    try:
        result = result or annotate_smiles(smiles, id=id, settings=settings)
        if result.status == "error" or result.parent_smiles is None:
            raise ValueError("; ".join(result.messages) or "annotation failed")
        structure = _structure(result.parent_smiles, result.sites)
        legend, legend_end = _legend(result.sites, STRUCT + 30, 60)
        plot, plot_end = _plot(result.parent_smiles, settings, STRUCT + 60, max(legend_end + 50, 160))
        notes = "; ".join(result.messages)
        body = structure + legend + plot
        height = max(plot_end, STRUCT + 50) + 30
        footer = f"estimated pKa — verify decisions that matter by measurement. {notes}"
    except Exception as exc:  # drawing never stops a run: the card carries the reason
        return message_card_svg(title, f"could not draw: {exc}")
    return _frame(title, body, height, footer)


def message_card_svg(title: str, message: str) -> str:
    """A card with text only: for molecules that failed annotation or drawing."""
    body = (f'<text x="10" y="70" font-family="sans-serif" font-size="13" fill="{INK}">'
            f"{_esc(' '.join(message.split())[:150])}</text>")
    return _frame(title, body, 110, "no picture for this molecule")


def _frame(title: str, body: str, height: int, footer: str) -> str:
    return (f'<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height}" '
            f'viewBox="0 0 {WIDTH} {height}">'
            f'<rect width="100%" height="100%" fill="{PAPER}" stroke="{GREY}"/>'
            f'<text x="10" y="22" font-family="sans-serif" font-size="13" font-weight="bold" fill="{INK}">'
            f"{_esc(title[:110])}</text>{body}"
            f'<text x="10" y="{height - 10}" font-family="sans-serif" font-size="10" fill="{GREY}">'
            f"{_esc(footer[:140])}</text></svg>")


def _safe_name(text: str) -> str:
    cleaned = "".join(c if c.isalnum() or c in "-_." else "_" for c in text).strip("._")
    return cleaned[:80] or "molecule"


def write_card(result: MoleculeResult, smiles: str, directory: Path, *, fmt: str = "svg",
               settings: Settings | None = None) -> Path:
    """Write the card of an annotated molecule as ``directory/<id>.<fmt>``."""
    directory.mkdir(parents=True, exist_ok=True)
    svg = card_svg(smiles, id=result.id, settings=settings, result=result)
    path = directory / f"{_safe_name(result.id)}.{fmt}"
    if fmt == "png":
        import cairosvg  # imported here: SVG cards need no cairo

        cairosvg.svg2png(bytestring=svg.encode(), write_to=str(path))
    else:
        path.write_text(svg, encoding="utf-8")
    return path


def write_cards(items: Iterable[tuple[str, str]], directory: Path, *, fmt: str = "svg",
                settings: Settings | None = None) -> list[Path]:
    """Annotate and draw each (id, SMILES); one file per molecule, failures get a message card."""
    settings = settings or Settings()
    return [write_card(annotate_smiles(smiles, id=mol_id, settings=settings), smiles, directory,
                       fmt=fmt, settings=settings) for mol_id, smiles in items]
