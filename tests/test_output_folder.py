"""Where a build writes: ``[site] output`` is relative to its site.toml, whatever the
working folder, and ``cardgen check`` names the folder (the README's key table says
so); the bundled demo, which lies inside the installed package, is written to
``./site`` of the working folder."""

import numpy as np
from gpxmaker import profile_gpx

from cardgen.cli.build import _site_config, output_folder


def _event(tmp_path, output_line: str = ""):
    src = tmp_path / "event"
    src.mkdir()
    distance = np.arange(0.0, 3000.0, 10.0)
    profile_gpx(src / "flat.gpx", distance, np.full_like(distance, 50.0))
    (src / "site.toml").write_text(
        f'[site]\ntitle = "Small"\n{output_line}[[routes]]\ngpx = "flat.gpx"\n'
        '[[riders]]\nname = "A"\nvehicle = "road-hoods"\n',
        encoding="utf-8",
    )
    return src


def test_check_names_the_output_beside_the_site_toml_from_another_folder(tmp_path, cli):
    src = _event(tmp_path, 'output = "pages"\n')
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    code, out, err = cli("check", str(src / "site.toml"), cwd=elsewhere)
    assert code == 0, err
    assert f"a build writes to {src / 'pages'}" in out
    assert not (elsewhere / "pages").exists() and not (src / "pages").exists()


def test_the_default_output_is_site_beside_the_site_toml(tmp_path, monkeypatch):
    src = _event(tmp_path)
    monkeypatch.chdir(tmp_path)
    config, demo = _site_config(str(src / "site.toml"))
    assert not demo and output_folder(config, demo) == src / "site"
    assert str(output_folder(config, demo, "x")) == "x"  # -o is taken as given


def test_the_bundled_demo_is_written_to_the_working_folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    config, demo = _site_config(None)
    assert demo and output_folder(config, demo) == tmp_path / "site"
