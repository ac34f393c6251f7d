"""The Processing algorithms: each one calls geo_corrosion's command line by subprocess.

Every algorithm streams the command's progress lines into the log and the progress bar,
puts the QA summary in the log, can be cancelled (the subprocess is stopped), and turns a
failure into a ``QgsProcessingException`` carrying the package's own message.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from qgis.core import (
    QgsProcessing,
    QgsProcessingAlgorithm,
    QgsProcessingContext,
    QgsProcessingException,
    QgsProcessingFeedback,
    QgsProcessingOutputBoolean,
    QgsProcessingOutputFile,
    QgsProcessingOutputFolder,
    QgsProcessingOutputNumber,
    QgsProcessingOutputString,
    QgsProcessingParameterBoolean,
    QgsProcessingParameterDefinition,
    QgsProcessingParameterEnum,
    QgsProcessingParameterFile,
    QgsProcessingParameterFolderDestination,
    QgsProcessingParameterNumber,
    QgsProcessingParameterVectorLayer,
    QgsSettings,
)

from geo_corrosion_qgis.progress import ProgressTracker
from geo_corrosion_qgis.runner import (
    ENV_PYTHON,
    CliError,
    CliResult,
    error_message,
    find_python,
    run_cli,
)

__all__ = ["SETTINGS_PYTHON", "algorithms"]

#: the QgsSettings key holding the Python of geo_corrosion's environment
SETTINGS_PYTHON = "geo_corrosion/python_path"
GROUP_SITE = ("sitework", "Site and run")
GROUP_RUN = ("runwork", "Existing run")
GROUP_SETUP = ("setup", "Setup")


def _folder(alg: QgsProcessingAlgorithm, params: dict[str, Any], name: str,
            context: QgsProcessingContext, what: str, optional: bool = False) -> Path | None:
    text = alg.parameterAsString(params, name, context) or alg.parameterAsFile(params, name,
                                                                                context)
    if not text:
        if optional:
            return None
        raise QgsProcessingException(f"choose {what}")
    return Path(text)


class _Base(QgsProcessingAlgorithm):
    """Common parts: the group, the Python, the call and its log."""

    _id = ""
    _title = ""
    _group = GROUP_SITE
    _help = ""

    def createInstance(self) -> QgsProcessingAlgorithm:  # noqa: D102
        return type(self)()

    def name(self) -> str:  # noqa: D102
        return self._id

    def displayName(self) -> str:  # noqa: D102
        return self._title

    def group(self) -> str:  # noqa: D102
        return self._group[1]

    def groupId(self) -> str:  # noqa: D102
        return self._group[0]

    def shortHelpString(self) -> str:  # noqa: D102
        return self._help + (
            "<p>geo_corrosion runs in its own Python environment, called by the plugin: "
            "the Python is the plugin setting (algorithm <i>Set the Python of "
            f"geo_corrosion</i>), else {ENV_PYTHON}, else the <tt>geo-corrosion</tt> command "
            "on PATH, else a <tt>.venv</tt> beside the folder.</p>")

    def python(self, near: Path | None) -> Path:
        """Return the Python of geo_corrosion's environment."""
        setting = QgsSettings().value(SETTINGS_PYTHON, "", type=str)
        try:
            return find_python(setting or None, near)
        except CliError as err:
            raise QgsProcessingException(str(err)) from None

    def call(self, args: list[str], feedback: QgsProcessingFeedback, near: Path | None,
             ok_codes: tuple[int, ...] = (0,)) -> CliResult:
        """Run the command line with ``args``; stream its lines into the log."""
        python = self.python(near)
        feedback.pushCommandInfo(f"{python} -m geo_corrosion.cli.main {' '.join(args)}")
        tracker = ProgressTracker()

        def on_err(line: str) -> None:
            text = line.strip()
            if not text:
                return
            if text.startswith("note:"):
                feedback.pushWarning(text)
            elif not text.startswith("Error:"):
                feedback.pushInfo(text)
            pct = tracker.feed(line)
            if pct is not None:
                feedback.setProgress(pct)

        def on_out(line: str) -> None:
            feedback.pushConsoleInfo(line)

        try:
            result = run_cli(python, args, on_stdout=on_out, on_stderr=on_err,
                             is_canceled=feedback.isCanceled, cwd=near, ok_codes=ok_codes)
        except CliError as err:
            raise QgsProcessingException(str(err)) from None
        feedback.setProgress(100)
        return result

    @staticmethod
    def qa_summary(result: CliResult) -> str:
        """Return the QA summary among the command's output lines (its last QA line)."""
        for line in reversed(result.stdout):
            if "QA" in line or "flag" in line or "error" in line or "warning" in line:
                return line.strip()
        return ""


class CheckSite(_Base):
    """Check a site folder."""

    _id = "checksite"
    _title = "Check a site folder"
    _help = ("<p>Reads every file of a site folder (the site file <tt>site.toml</tt>, plans, "
             "readings), applies the corrections and lists the QA findings, without mapping "
             "anything. The algorithm fails with the findings when the site cannot be run.</p>"
             "<p><b>Site folder</b>: the folder holding <tt>site.toml</tt>.<br>"
             "<b>Findings listed at most</b>: how many findings the log lists.</p>")

    def initAlgorithm(self, config: Any = None) -> None:  # noqa: D102
        self.addParameter(QgsProcessingParameterFile(
            "SITE", "Site folder", behavior=QgsProcessingParameterFile.Folder))
        rows = QgsProcessingParameterNumber("MAX_ROWS", "Findings listed at most",
                                            QgsProcessingParameterNumber.Integer, 50,
                                            minValue=1)
        rows.setFlags(rows.flags() | QgsProcessingParameterDefinition.FlagAdvanced)
        self.addParameter(rows)
        self.addOutput(QgsProcessingOutputBoolean("RUNNABLE", "The site can be run"))
        self.addOutput(QgsProcessingOutputString("QA_SUMMARY", "QA summary"))

    def processAlgorithm(self, parameters: dict[str, Any], context: QgsProcessingContext,
                         feedback: QgsProcessingFeedback) -> dict[str, Any]:  # noqa: D102
        site = _folder(self, parameters, "SITE", context, "the site folder")
        rows = self.parameterAsInt(parameters, "MAX_ROWS", context)
        result = self.call(["check", str(site), "--max-rows", str(rows)], feedback, site,
                           ok_codes=(0, 1))
        summary = next((ln.strip() for ln in reversed(result.stdout)
                        if "site can" in ln or "site cannot" in ln), "")
        if result.returncode != 0:
            if any(ln.startswith("Error:") for ln in result.stderr) or not summary:
                raise QgsProcessingException(
                    error_message(self.python(site), result.returncode, result.stderr))
            findings = [ln for ln in result.stdout if ln.strip()][-12:]
            raise QgsProcessingException("\n".join(findings))
        feedback.pushInfo(summary)
        return {"RUNNABLE": True, "QA_SUMMARY": summary}


class _Loads(_Base):
    """An algorithm whose outputs are loaded into the project when it finishes."""

    def __init__(self) -> None:
        super().__init__()
        self._run_dir: Path | None = None
        self._load = False
        self._results: dict[str, Any] = {}

    def add_load_parameter(self) -> None:
        """Add the parameter that says whether to load the run's layers."""
        self.addParameter(QgsProcessingParameterBoolean(
            "LOAD", "Open the run's layers in the current project", True))
        self.addOutput(QgsProcessingOutputNumber("LOADED_LAYERS", "Layers loaded"))

    def add_run_outputs(self) -> None:
        """Declare the files of a run folder as outputs."""
        self.addOutput(QgsProcessingOutputFile("GEOPACKAGE", "GeoPackage (survey.gpkg)"))
        self.addOutput(QgsProcessingOutputFile("PROJECT", "QGIS project (survey.qgs)"))
        self.addOutput(QgsProcessingOutputFile("SCHEDULE", "Schedule of quantities (CSV)"))
        self.addOutput(QgsProcessingOutputFile("REPORT", "Report (PDF or HTML)"))
        self.addOutput(QgsProcessingOutputFile("WEBMAP", "Web map (HTML)"))
        self.addOutput(QgsProcessingOutputString("QA_SUMMARY", "QA summary"))

    @staticmethod
    def run_files(run_dir: Path) -> dict[str, Any]:
        """Return the outputs naming the files of ``run_dir``."""
        def f(name: str) -> str | None:
            return str(run_dir / name) if (run_dir / name).is_file() else None

        return {"GEOPACKAGE": f("survey.gpkg"), "PROJECT": f("survey.qgs"),
                "SCHEDULE": f("quantities.csv"), "REPORT": f("report.pdf") or f("report.html"),
                "WEBMAP": f("webmap.html")}

    def postProcessAlgorithm(self, context: QgsProcessingContext,
                             feedback: QgsProcessingFeedback) -> dict[str, Any]:  # noqa: D102
        if not self._load or self._run_dir is None or context.project() is None:
            return {}
        from geo_corrosion_qgis.loading import load_run, reload_run_layers

        reloaded = reload_run_layers(self._run_dir, context.project())
        n, how = load_run(self._run_dir, context.project())
        feedback.pushInfo(f"loaded {n} layers from {how}"
                          + (f"; reopened {reloaded} layers on the new files" if reloaded
                             else ""))
        # QGIS replaces the results of processAlgorithm by these when they are not empty
        return {**self._results, "LOADED_LAYERS": n}


class RunSite(_Loads):
    """Run a site folder to an output folder and load it."""

    _id = "runsite"
    _title = "Run a site folder"
    _help = ("<p>Runs the whole job on a site folder: kriged surfaces, condition classes, "
             "repair layout, schedule of quantities, drawings, report and web map, written "
             "into the output folder, which is then opened in the current project with the "
             "run's own styles, a group per level.</p>"
             "<p><b>Site folder</b>: the folder holding <tt>site.toml</tt>.<br>"
             "<b>Output folder</b>: where the run is written.<br>"
             "<b>Replace an existing output folder</b>: replace a run already there (the new "
             "one is swapped in only once complete); without it an existing run is kept and "
             "the algorithm stops.<br>"
             "<b>Open the run's layers in the current project</b>: add the run's project "
             "(or its GeoPackage's layers) to the current project, in one group.</p>")

    def initAlgorithm(self, config: Any = None) -> None:  # noqa: D102
        self.addParameter(QgsProcessingParameterFile(
            "SITE", "Site folder", behavior=QgsProcessingParameterFile.Folder))
        self.addParameter(QgsProcessingParameterFolderDestination("OUTPUT", "Output folder"))
        self.addParameter(QgsProcessingParameterBoolean(
            "OVERWRITE", "Replace an existing output folder", False))
        self.add_load_parameter()
        self.add_run_outputs()

    def processAlgorithm(self, parameters: dict[str, Any], context: QgsProcessingContext,
                         feedback: QgsProcessingFeedback) -> dict[str, Any]:  # noqa: D102
        site = _folder(self, parameters, "SITE", context, "the site folder")
        out = Path(self.parameterAsString(parameters, "OUTPUT", context))
        args = ["run", str(site), "--out", str(out)]
        if out.is_dir() and not any(out.iterdir()):
            out.rmdir()  # an empty folder made for the destination is not a run to keep
        if self.parameterAsBool(parameters, "OVERWRITE", context):
            args.append("--overwrite")
        result = self.call(args, feedback, site)
        summary = self.qa_summary(result)
        if summary:
            feedback.pushInfo(f"QA: {summary}")
        self._run_dir = out
        self._load = self.parameterAsBool(parameters, "LOAD", context)
        self._results = {"OUTPUT": str(out), "QA_SUMMARY": summary, **self.run_files(out)}
        return self._results


class RepriceRun(_Loads):
    """Re-price a run after its repair outlines were edited."""

    _id = "repricerun"
    _title = "Re-price edited repairs"
    _help = ("<p>After repair outlines were edited (move, reshape, add or delete features of "
             "a level's <tt>&lt;level&gt;_repairs</tt> layer in the run's "
             "<tt>survey.gpkg</tt>, keeping each feature's <tt>repair_id</tt>), checks the "
             "edits and rebuilds the schedule of quantities, drawing sheets, report, web map "
             "and run record together; the run's layers and the schedule are then reopened.</p>"
             "<p><b>Run folder</b>: the output folder of a run.<br>"
             "<b>Edited repairs layer</b>: optional; the edited layer (save its edits first). "
             "Its GeoPackage is read instead of the run's own.<br>"
             "<b>Edited file</b>: optional; a GeoPackage, or a level's drawing sheet "
             "<tt>drawings/&lt;level&gt;_repairs.dxf</tt> edited in CAD.<br>"
             "<b>Site folder</b>: optional; where the site is now, when it moved since the "
             "run.<br><b>Open the run's layers in the current project</b>: reopen the run's "
             "layers and the schedule once re-priced.</p>")

    def initAlgorithm(self, config: Any = None) -> None:  # noqa: D102
        self.addParameter(QgsProcessingParameterFile(
            "RUN", "Run folder", behavior=QgsProcessingParameterFile.Folder))
        self.addParameter(QgsProcessingParameterVectorLayer(
            "REPAIRS", "Edited repairs layer", [QgsProcessing.TypeVectorPolygon],
            optional=True))
        self.addParameter(QgsProcessingParameterFile(
            "EDITED_FILE", "Edited file (GeoPackage or drawing sheet DXF)",
            fileFilter="GeoPackage or DXF (*.gpkg *.GPKG *.dxf *.DXF)", optional=True))
        self.addParameter(QgsProcessingParameterFile(
            "SITE", "Site folder (if it moved since the run)",
            behavior=QgsProcessingParameterFile.Folder, optional=True))
        self.add_load_parameter()
        self.add_run_outputs()
        self.addOutput(QgsProcessingOutputString("CHANGES", "Repairs changed"))

    def prepareAlgorithm(self, parameters: dict[str, Any], context: QgsProcessingContext,
                         feedback: QgsProcessingFeedback) -> bool:  # noqa: D102
        self._edited: str | None = None
        layer = self.parameterAsVectorLayer(parameters, "REPAIRS", context)
        if layer is not None:
            if layer.isEditable() and layer.isModified():
                raise QgsProcessingException(
                    f"the layer {layer.name()} has unsaved edits: save them (Layer > Save "
                    "Layer Edits) and run the re-pricing again")
            path = layer.source().split("|")[0]
            if not path.lower().endswith(".gpkg"):
                raise QgsProcessingException(
                    f"the layer {layer.name()} is not in a GeoPackage ({path}); edit the "
                    "<level>_repairs layer of the run's survey.gpkg")
            self._edited = path
        return True

    def processAlgorithm(self, parameters: dict[str, Any], context: QgsProcessingContext,
                         feedback: QgsProcessingFeedback) -> dict[str, Any]:  # noqa: D102
        run_dir = _folder(self, parameters, "RUN", context, "the run folder")
        edited_file = self.parameterAsFile(parameters, "EDITED_FILE", context)
        if edited_file and self._edited:
            raise QgsProcessingException(
                "give the edited repairs layer or the edited file, not both")
        source = edited_file or self._edited
        args = ["reprice", str(run_dir)]
        if source and Path(source).resolve() != (run_dir / "survey.gpkg").resolve():
            args += ["--from", str(source)]
        site = _folder(self, parameters, "SITE", context, "", optional=True)
        if site is not None:
            args += ["--site", str(site)]
        result = self.call(args, feedback, run_dir)
        changes = [ln.strip() for ln in result.stdout if " m2 -> " in ln
                   or "no repair outline" in ln]
        for line in changes:
            feedback.pushInfo(line)
        self._run_dir = run_dir
        self._load = self.parameterAsBool(parameters, "LOAD", context)
        self._results = {"CHANGES": "\n".join(changes), "QA_SUMMARY": self.qa_summary(result),
                         **self.run_files(run_dir)}
        return self._results


class RebuildDocuments(_Base):
    """Rebuild the web map and the report of a run."""

    _id = "rebuilddocuments"
    _title = "Rebuild the web map and the report"
    _what = ("web map and report", "web map only", "report only")
    _help = ("<p>Rebuilds <tt>webmap.html</tt> and/or <tt>report.html</tt> and "
             "<tt>report.pdf</tt> of a run from its files, with no recomputation (for "
             "example after a newer geo_corrosion changed their layout). Refused when the "
             "repair outlines were edited since the run: re-price the run instead.</p>"
             "<p><b>Run folder</b>: the output folder of a run.<br>"
             "<b>Documents</b>: which ones to rebuild.<br>"
             "<b>Write the PDF</b>: with the report, also <tt>report.pdf</tt>.</p>")
    _group = GROUP_RUN

    def initAlgorithm(self, config: Any = None) -> None:  # noqa: D102
        self.addParameter(QgsProcessingParameterFile(
            "RUN", "Run folder", behavior=QgsProcessingParameterFile.Folder))
        self.addParameter(QgsProcessingParameterEnum("DOCUMENTS", "Documents",
                                                     list(self._what), defaultValue=0))
        self.addParameter(QgsProcessingParameterBoolean("PDF", "Write the PDF", True))
        self.addOutput(QgsProcessingOutputFile("WEBMAP", "Web map (HTML)"))
        self.addOutput(QgsProcessingOutputFile("REPORT", "Report (PDF or HTML)"))

    def processAlgorithm(self, parameters: dict[str, Any], context: QgsProcessingContext,
                         feedback: QgsProcessingFeedback) -> dict[str, Any]:  # noqa: D102
        run_dir = _folder(self, parameters, "RUN", context, "the run folder")
        which = self.parameterAsEnum(parameters, "DOCUMENTS", context)
        out: dict[str, Any] = {}
        if which in (0, 1):
            self.call(["map", str(run_dir)], feedback, run_dir)
            out["WEBMAP"] = str(run_dir / "webmap.html")
        if feedback.isCanceled():
            return out
        if which in (0, 2):
            pdf = self.parameterAsBool(parameters, "PDF", context)
            self.call(["report", str(run_dir), *([] if pdf else ["--no-pdf"])], feedback,
                      run_dir)
            out["REPORT"] = str(run_dir / ("report.pdf" if pdf else "report.html"))
        return out


class SetPython(_Base):
    """Choose the Python of geo_corrosion's environment and check that it runs."""

    _id = "setpython"
    _title = "Set the Python of geo_corrosion"
    _group = GROUP_SETUP
    _help = ("<p>Stores the Python of the environment where geo_corrosion is installed "
             "(e.g. <tt>.venv/bin/python</tt> or <tt>.venv\\Scripts\\python.exe</tt>) in the "
             "plugin's settings and checks that it runs geo_corrosion. Leave it empty to find "
             f"it automatically ({ENV_PYTHON}, then the <tt>geo-corrosion</tt> command on "
             "PATH) and store what was found.</p>"
             "<p><b>Python of geo_corrosion's environment</b>: the python executable.</p>")

    def initAlgorithm(self, config: Any = None) -> None:  # noqa: D102
        self.addParameter(QgsProcessingParameterFile(
            "PYTHON", "Python of geo_corrosion's environment", optional=True,
            fileFilter="All files (*)"))  # python has no extension outside Windows
        self.addOutput(QgsProcessingOutputString("PYTHON_PATH", "Python"))
        self.addOutput(QgsProcessingOutputString("VERSION", "geo_corrosion version"))
        self.addOutput(QgsProcessingOutputFolder("ENVIRONMENT", "Environment"))

    def processAlgorithm(self, parameters: dict[str, Any], context: QgsProcessingContext,
                         feedback: QgsProcessingFeedback) -> dict[str, Any]:  # noqa: D102
        chosen = self.parameterAsFile(parameters, "PYTHON", context)
        try:
            python = find_python(chosen or None, None)
        except CliError as err:
            raise QgsProcessingException(str(err)) from None
        lines: list[str] = []
        try:
            run_cli(python, ["--version"], on_stdout=lines.append, on_stderr=lines.append,
                    is_canceled=feedback.isCanceled)
        except CliError as err:
            raise QgsProcessingException(str(err)) from None
        QgsSettings().setValue(SETTINGS_PYTHON, str(python))
        version = (lines[-1].split("version")[-1].strip(" ,") if lines else "")
        feedback.pushInfo(f"stored {python} (geo_corrosion {version}) in the setting "
                          f"{SETTINGS_PYTHON}")
        return {"PYTHON_PATH": str(python), "VERSION": version,
                "ENVIRONMENT": os.path.dirname(os.path.dirname(str(python)))}


def algorithms() -> list[QgsProcessingAlgorithm]:
    """Return one instance of each algorithm of the provider."""
    return [CheckSite(), RunSite(), RepriceRun(), RebuildDocuments(), SetPython()]
