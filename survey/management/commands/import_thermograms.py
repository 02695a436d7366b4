"""Import thermogram files or folders into a survey from the command line.

An optional CSV manifest (columns: file, emissivity, reflected_c, distance_m, asset, note)
sets per-file capture settings; `asset` is matched by name or equipment id on the survey's site.
"""

import csv
from pathlib import Path

from django.core.exceptions import ValidationError
from django.core.files import File
from django.core.management.base import BaseCommand, CommandError

from survey.models import Survey
from survey.services.ingest import thermogram_ingest
from survey.services.surveys import thermogram_update_settings

ACCEPTED_SUFFIXES = {".tif", ".tiff", ".png", ".jpg", ".jpeg", ".csv", ".tsv", ".txt", ".npy"}


def _number(row: dict, name: str) -> float | None:
    value = (row.get(name) or "").strip().replace(",", ".")
    if not value:
        return None
    try:
        return float(value)
    except ValueError:
        raise CommandError(f"Manifest: {name} {value!r} of {row.get('file')} is not a number.")


class Command(BaseCommand):
    help = "Import thermogram files (or every file of a folder) into survey SURVEY_ID."

    def add_arguments(self, parser):
        parser.add_argument("survey_id", type=int)
        parser.add_argument("paths", nargs="+")
        parser.add_argument(
            "--manifest", help="CSV with file, emissivity, reflected_c, distance_m, asset, note"
        )
        parser.add_argument("--unit", default="C", choices=["C", "F", "K"])
        parser.add_argument("--scale", type=float)
        parser.add_argument("--offset", type=float)

    def handle(
        self, *args, survey_id, paths, manifest=None, unit="C", scale=None, offset=None, **options
    ):
        survey = Survey.objects.filter(pk=survey_id).select_related("site").first()
        if survey is None:
            raise CommandError(f"No survey {survey_id}.")
        files = [
            p for p in self._files(paths) if not manifest or p.resolve() != Path(manifest).resolve()
        ]
        rows = self._manifest(manifest)
        stored = rejected = 0
        for number, path in enumerate(files, start=1):
            row = rows.get(path.name, {})
            asset = self._asset(survey, row.get("asset", ""))
            try:
                with path.open("rb") as handle:
                    thermogram = thermogram_ingest(
                        survey=survey,
                        uploaded_file=File(handle, name=path.name),
                        user=None,
                        unit=unit,
                        scale=scale,
                        offset=offset,
                        emissivity=_number(row, "emissivity"),
                        reflected_c=_number(row, "reflected_c"),
                        distance_m=_number(row, "distance_m"),
                        asset=asset,
                    )
                if row.get("note"):
                    thermogram_update_settings(thermogram=thermogram, user=None, note=row["note"])
                stored += 1
                outcome = "stored"
            except ValidationError as error:
                rejected += 1
                outcome = "REJECTED: " + " ".join(error.messages)
            self.stdout.write(f"[{number}/{len(files)}] {path.name}: {outcome}")
        self.stdout.write(f"{stored} stored, {rejected} rejected.")

    def _files(self, paths: list[str]) -> list[Path]:
        found: list[Path] = []
        for raw in paths:
            path = Path(raw)
            if path.is_dir():
                found += sorted(p for p in path.iterdir() if p.suffix.lower() in ACCEPTED_SUFFIXES)
            elif path.is_file():
                found.append(path)
            else:
                raise CommandError(f"{raw} is neither a file nor a folder.")
        return found

    def _manifest(self, manifest: str | None) -> dict[str, dict]:
        if not manifest:
            return {}
        with open(manifest, newline="", encoding="utf-8-sig") as handle:
            sample = handle.read(2048)
            handle.seek(0)
            dialect = csv.Sniffer().sniff(sample, delimiters=",;\t")
            return {row["file"].strip(): row for row in csv.DictReader(handle, dialect=dialect)}

    def _asset(self, survey: Survey, text: str):
        text = text.strip()
        if not text:
            return None
        asset = (
            survey.site.assets.filter(name=text).first()
            or survey.site.assets.filter(tag=text).first()
        )
        if asset is None:
            raise CommandError(f"Manifest: no asset {text!r} on site {survey.site}.")
        return asset
