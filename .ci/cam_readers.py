"""Two independent, general-purpose Gerber libraries read every committed example output.

Run by .ci/run in a throw-away virtual environment with pinned versions:
  - gerbonara 1.5.0 (PyPI): `gerbonara.GerberFile.open(path)` for every image and
    `gerbonara.ExcellonFile.open(path)` for every drill file; any exception or any warning the
    reader raises fails the run, and every file must hold at least one object.
  - PyGerber 3.0.0a4 (PyPI): `pygerber.gerber.api._gerber_job_file.GerberJobFile.from_file(path)`
    for every Gerber job file (a private module of the library, hence the exact pin): the
    library's typed model of the Gerber job file, which requires `Header.CreationDate`,
    `Header.GenerationSoftware`, `GeneralSpecs.{ProjectId (Name, GUID, Revision), Size,
    LayerNumber, BoardThickness}`, `FilesAttributes[].{Path, FileFunction, FilePolarity}` and
    `MaterialStackup[].{Name, Type}` with their types (mostly strings: it checks that the
    fields are there, not their values). Beyond the model: the job file's list of files must
    equal the image and drill files of its folder.
  - A control that shows the job check can fail: the first job file with its CreationDate
    removed must be refused by the same call.

Usage: python cam_readers.py <folder>   (exit status 0 when every check holds)
"""

import glob
import json
import os
import sys
import tempfile
import warnings

import gerbonara
from pygerber.gerber.api._gerber_job_file import GerberJobFile


def main(root):
    failures = []
    images = sorted(glob.glob(os.path.join(root, "**", "*.gbr"), recursive=True))
    drills = sorted(glob.glob(os.path.join(root, "**", "*.drl"), recursive=True))
    jobs = sorted(glob.glob(os.path.join(root, "**", "*.gbrjob"), recursive=True))
    if not images or not drills or not jobs:
        failures.append(f"nothing to read under {root}: {len(images)} images, "
                        f"{len(drills)} drill files, {len(jobs)} job files")
    for path in images + drills:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                if path.endswith(".drl"):
                    layer = gerbonara.ExcellonFile.open(path)
                else:
                    layer = gerbonara.GerberFile.open(path)
            except Exception as e:  # any reader error is a failure of the file
                failures.append(f"gerbonara could not read {path}: {e}")
                continue
        if caught:
            failures.append(f"gerbonara warned on {path}: {caught[0].message}")
        if len(layer.objects) == 0:
            failures.append(f"gerbonara found no objects in {path}")
    for path in jobs:
        try:
            job = GerberJobFile.from_file(path)
        except Exception as e:
            failures.append(f"PyGerber's GerberJobFile refused {path}: {e}")
            continue
        listed = sorted(f.path for f in job.files_attributes)
        folder = os.path.dirname(path)
        present = sorted(f for f in os.listdir(folder) if f.endswith((".gbr", ".drl")))
        if listed != present:
            failures.append(f"{path} lists {listed}, its folder holds {present}")
    if jobs:
        with open(jobs[0]) as f:
            broken = json.load(f)
        del broken["Header"]["CreationDate"]
        with tempfile.NamedTemporaryFile("w", suffix=".gbrjob", delete=False) as t:
            json.dump(broken, t)
        try:
            GerberJobFile.from_file(t.name)
            failures.append("control: a job file without CreationDate was accepted")
        except Exception:
            pass
        finally:
            os.unlink(t.name)
    for line in failures:
        print(line)
    print(f"gerbonara read {len(images)} images and {len(drills)} drill files; "
          f"PyGerber validated {len(jobs)} job files; {len(failures)} failures")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1] if len(sys.argv) > 1 else "out_examples"))
