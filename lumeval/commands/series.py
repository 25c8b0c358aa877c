"""``lumeval series``: spectra of one product at several settings (CCT setpoints, dimming
levels, drive currents): figures against the setting, the chromaticity trajectory and each
setting's Δu′v′ from a reference (Python twin: :func:`lumeval.tunable.api.series_files`)."""

from __future__ import annotations

from enum import Enum
from pathlib import Path

import typer

from .._paths import command_line
from .mix import OutputFormat, emit_report


class SettingFrom(str, Enum):
    name = "name"
    metadata = "metadata"
    manifest = "manifest"


def register(app: typer.Typer) -> None:
    @app.command("series")
    def series_cmd(
        files: list[Path] = typer.Argument(..., help="Spectra of one product at several settings.", show_default=False),
        setting_from: SettingFrom = typer.Option(SettingFrom.name, "--setting-from", help="Where each spectrum's setting "
                                                 "comes from: a number in its file (or column) name, a metadata field "
                                                 "(--setting-key), or a manifest (--manifest)."),
        manifest: Path = typer.Option(None, "--manifest", help="TOML ([settings] \"file\" = value, optional unit) or CSV "
                                      "(file,setting) manifest; implies --setting-from manifest.", show_default=False),
        setting_key: str = typer.Option("setting", "--setting-key", help="The metadata field holding the setting."),
        unit: str = typer.Option(None, "--unit", help="The settings' unit (K, %, mA ...); default: as written with the numbers.",
                                 show_default=False),
        reference: str = typer.Option("max", "--reference", help="Δu′v′ is measured from: max (the highest setting, full "
                                      "output), min, a setting value, or locus (each setting's Planckian point; settings in K)."),
        criteria: Path = typer.Option(None, "--criteria", "-c", help="Criteria file (TOML) judged at every setting.",
                                      show_default=False),
        output_format: OutputFormat = typer.Option(OutputFormat.terminal, "--format", "-f",
                                                   help="terminal tables, one JSON document, or CSV (one row per setting)."),
        html: Path = typer.Option(None, "--html", help="Also write an HTML report (trajectory, figures versus setting).",
                                  show_default=False),
    ) -> None:
        """Judge a measured series of one product over its settings. Exit 0: every clause met
        over its range; 1: a clause failed or could not be judged; 2: bad input."""
        from ._targets import check_targets
        from ._text import require_utf8

        require_utf8("--unit", unit, "unit")
        require_utf8("--setting-key", setting_key, "metadata field")
        check_targets(files={"--html": html},
                      inputs=[*files, *([criteria] if criteria else []), *([manifest] if manifest else [])])
        from ..tunable.api import series_files
        from ._progress import progress_listener

        with progress_listener() as progress:  # on stderr, a terminal only; removed before the report prints
            report = series_files(files, setting_from=setting_from.value, key=setting_key, manifest=manifest,
                                  unit=unit, reference=reference, criteria=criteria, progress=progress)
        emit_report(report, output_format, html, command_line())
