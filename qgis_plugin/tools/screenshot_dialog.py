r"""Render a plugin algorithm's Processing dialog offscreen to a PNG (for the docs).

Run with Debian's PyQGIS from the repository root::

    QT_QPA_PLATFORM=offscreen /usr/bin/python3 qgis_plugin/tools/screenshot_dialog.py \\
        geocorrosion:runsite docs/images/qgis_plugin_dialog.png \\
        '{"SITE": "/home/survey/jobs/millbrook_garage"}'

The third argument (optional) fills the dialog's parameters.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path


def main(alg_id: str, png: str, params: str = "{}") -> None:
    """Show the dialog of ``alg_id`` offscreen and save it to ``png``."""
    from qgis.core import QgsApplication

    QgsApplication.setPrefixPath("/usr", True)
    app = QgsApplication([], True)
    app.initQgis()
    sys.path.insert(0, "/usr/share/qgis/python/plugins")
    sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
    from processing.core.Processing import Processing

    Processing.initialize()
    from geo_corrosion_qgis.provider import CorrosionSurveyProvider
    from processing.gui.AlgorithmDialog import AlgorithmDialog

    provider = CorrosionSurveyProvider()
    QgsApplication.processingRegistry().addProvider(provider)
    alg = QgsApplication.processingRegistry().createAlgorithmById(alg_id)
    dlg = AlgorithmDialog(alg)
    dlg.resize(1000, 640)
    dlg.setParameters(json.loads(params))
    dlg.show()
    for _ in range(20):
        app.processEvents()
    if not dlg.grab().save(png):
        raise SystemExit(f"could not write {png}")
    print(f"wrote {png}")


if __name__ == "__main__":
    main(*sys.argv[1:4])
