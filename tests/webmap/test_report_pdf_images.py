"""The report's PDF takes the figures' PNG data as it is, and the figures are opaque RGB PNGs.

Sources: a PNG's IDAT chunks hold one zlib stream of filtered rows [PNG (ISO/IEC 15948)
§11.2.4]; a PDF image with ``/FlateDecode`` and ``/Predictor 15`` takes those rows as they are
[ISO 32000-1 §7.4.4.4]; the pixels are checked against Pillow's decoding of the PNG (reference
library) and matplotlib's own ``savefig`` (reference library).
"""

from __future__ import annotations

import io
import zlib
from pathlib import Path

import numpy as np
import pytest

from geo_corrosion.exporters._html import png_data_url


def _png(rgb: np.ndarray, level: int) -> bytes:
    from PIL import Image

    buf = io.BytesIO()
    Image.fromarray(rgb, "RGB").save(buf, format="png", compress_level=level)
    return buf.getvalue()


def test_pdf_image_is_the_png_data_unchanged(tmp_path: Path) -> None:
    """An RGB PNG reaches the PDF with its own compressed rows, and decodes to its pixels."""
    pytest.importorskip("weasyprint")
    import pypdf
    from PIL import Image

    from geo_corrosion.exporters.report.build import _png_cache, _rgb_png_idat

    rng = np.random.default_rng(4)
    rgb = rng.integers(0, 256, (37, 53, 3), dtype=np.uint8)
    # compress level 1: WeasyPrint's own re-encoding (Pillow's default, 6) gives other bytes
    png = _png(rgb, 1)
    idat = _rgb_png_idat(png)
    assert idat is not None
    text = f'<html><body><img src="{png_data_url(png)}" style="width: 5cm"></body></html>'
    import weasyprint

    pdf = tmp_path / "one.pdf"
    weasyprint.HTML(string=text).write_pdf(str(pdf), cache=_png_cache(text))
    page = pypdf.PdfReader(pdf).pages[0]
    images = [o.get_object() for o in page["/Resources"]["/XObject"].values()
              if o.get_object().get("/Subtype") == "/Image"]
    assert len(images) == 1
    im = images[0]
    assert "/SMask" not in im
    assert im._data == idat  # noqa: SLF001 - the stream's raw (still compressed) bytes
    # and its rows decode to the PNG's pixels (filter byte first on each row)
    rows = np.frombuffer(zlib.decompress(im._data), np.uint8).reshape(37, 1 + 53 * 3)  # noqa: SLF001
    assert rows.shape == (37, 160)
    pdf_pixels = np.asarray(Image.open(io.BytesIO(pypdf.PdfReader(pdf).pages[0].images[0].data)))
    assert np.array_equal(pdf_pixels, rgb)


def test_only_opaque_rgb_png_is_taken_as_it_is() -> None:
    """An RGBA, grey or palette PNG is left to WeasyPrint (it needs its alpha apart)."""
    from PIL import Image

    from geo_corrosion.exporters.report.build import _rgb_png_idat

    rgb = np.full((4, 5, 3), 200, np.uint8)
    assert _rgb_png_idat(_png(rgb, 6)) is not None
    for mode in ("RGBA", "L", "P"):
        buf = io.BytesIO()
        Image.fromarray(rgb, "RGB").convert(mode).save(buf, format="png")
        assert _rgb_png_idat(buf.getvalue()) is None, mode
    assert _rgb_png_idat(b"GIF89a") is None


def test_figure_png_is_savefig_without_alpha(tmp_path: Path) -> None:
    """figure_png gives matplotlib's savefig pixels, RGB, at the asked resolution."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure
    from PIL import Image

    from geo_corrosion.condition.plots import figure_png

    def fig() -> Figure:
        f = Figure(figsize=(3.0, 2.0), dpi=100)
        FigureCanvasAgg(f)
        ax = f.add_subplot(1, 1, 1)
        ax.plot([0, 1, 2], [2, 0, 1], lw=2)
        ax.set_title("a title")
        return f

    ours = Image.open(io.BytesIO(figure_png(fig(), 150)))
    fig().savefig(tmp_path / "ref.png", format="png", dpi=150)
    ref = np.asarray(Image.open(tmp_path / "ref.png"))
    assert ours.mode == "RGB"
    assert ours.size == (450, 300)
    assert (ref[..., 3] == 255).all()  # the figure is opaque: nothing is lost with alpha
    assert np.array_equal(np.asarray(ours), ref[..., :3])
