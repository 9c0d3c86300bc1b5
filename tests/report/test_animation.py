"""The flood-pulse animation: frame count, content, and the MP4 step through ffmpeg."""
from __future__ import annotations

import os
import shutil
import stat
import tomllib
from pathlib import Path

import numpy as np
import pytest
from PIL import Image, ImageChops

import bedflux
from bedflux.outputs.animation import animate, frame_indices

SCENARIOS = Path(__file__).resolve().parents[2] / "scenarios"


@pytest.fixture(scope="module")
def pulse():
    """A coarse version of scenarios/flood_pulse.toml: 25 outputs over 2 days."""
    d = tomllib.loads((SCENARIOS / "flood_pulse.toml").read_text())
    d["grid"].update(dx="1 m", dz="20 cm", dz_max="1 m")
    d["time"] = {"end": "2 d", "step": "1 h", "output_every": "2 h"}
    return bedflux.simulate(bedflux.Scenario.from_dict(d, base_dir=SCENARIOS))


def test_frame_indices():
    assert list(frame_indices(5, 10)) == [0, 1, 2, 3, 4]
    idx = frame_indices(121, 60)
    assert len(idx) == 60 and idx[0] == 0 and idx[-1] == 120 and np.all(np.diff(idx) > 0)
    assert len(frame_indices(0)) == 0


def test_gif_frames_and_content(pulse, tmp_path, monkeypatch):
    monkeypatch.setenv("PATH", str(tmp_path / "empty-path"))           # no ffmpeg: GIF only
    paths = animate(pulse, tmp_path / "animation", max_frames=12)
    assert paths == [tmp_path / "animation.gif"]
    im = Image.open(paths[0])
    assert im.format == "GIF" and im.n_frames == 12 and im.info.get("loop") == 0
    frames = []
    for i in range(im.n_frames):
        im.seek(i)
        frames.append(im.convert("RGB"))
    assert frames[0].size == (576, 448)
    for f in frames:
        assert len(f.getcolors(1 << 16) or []) > 20, "a frame is nearly blank"
        extrema = f.convert("L").getextrema()
        assert extrema[1] - extrema[0] > 150
    # the pulse changes the picture: the frame near the peak stage differs from the first
    times = pulse["time"].values[frame_indices(pulse.sizes["time"], 12)]
    peak = int(np.argmax(pulse["stage"].values[frame_indices(pulse.sizes["time"], 12)]))
    assert times[peak] > 0
    diff = np.asarray(ImageChops.difference(frames[0], frames[peak]).convert("L"))
    changed = float((diff > 30).mean())
    assert changed > 0.05, f"only {changed:.1%} of the pixels change between start and peak"


def test_all_outputs_are_frames_when_few(pulse, tmp_path, monkeypatch):
    monkeypatch.setenv("PATH", str(tmp_path / "empty-path"))
    gif = animate(pulse, tmp_path / "a", max_frames=60)[0]
    assert Image.open(gif).n_frames == pulse.sizes["time"] == 25


def test_steady_result_has_no_animation(pulse, tmp_path):
    assert animate(pulse.isel(time=0), tmp_path / "a") == []
    assert not list(tmp_path.iterdir())


def _fake_ffmpeg(folder: Path, body: str) -> None:
    folder.mkdir()
    exe = folder / "ffmpeg"
    exe.write_text("#!/bin/sh\n" + body)
    exe.chmod(exe.stat().st_mode | stat.S_IXUSR)


def test_mp4_through_ffmpeg_on_path(pulse, tmp_path, monkeypatch):
    # a stand-in ffmpeg that checks it is fed raw RGB frames of the stated size and writes its output
    bindir = tmp_path / "bin"
    _fake_ffmpeg(bindir, 'size=""; prev=""; for a in "$@"; do [ "$prev" = "-s" ] && size="$a"; prev="$a"; done\n'
                         'n=$(cat | wc -c); out=""; for a in "$@"; do out="$a"; done\n'
                         'echo "$size $n" > "$out"\n')
    monkeypatch.setenv("PATH", f"{bindir}{os.pathsep}{os.environ.get('PATH', '')}")
    paths = animate(pulse, tmp_path / "movie", max_frames=5)
    assert [p.name for p in paths] == ["movie.gif", "movie.mp4"]
    size, nbytes = (tmp_path / "movie.mp4").read_text().split()
    assert size == "576x448" and int(nbytes) == 5 * 576 * 448 * 3


def test_failing_ffmpeg_is_a_warning(pulse, tmp_path, monkeypatch):
    bindir = tmp_path / "bin"
    _fake_ffmpeg(bindir, 'cat > /dev/null; echo "no encoder" >&2; exit 1\n')
    monkeypatch.setenv("PATH", f"{bindir}{os.pathsep}{os.environ.get('PATH', '')}")
    with pytest.warns(UserWarning, match="no encoder"):
        paths = animate(pulse, tmp_path / "movie", max_frames=3)
    assert [p.name for p in paths] == ["movie.gif"]
    assert sorted(p.name for p in tmp_path.iterdir() if p.is_file()) == ["movie.gif"]


@pytest.mark.skipif(shutil.which("ffmpeg") is None, reason="ffmpeg is not installed (MP4 is optional)")
def test_real_ffmpeg_writes_an_mp4(pulse, tmp_path):
    paths = animate(pulse, tmp_path / "movie", max_frames=6)
    mp4 = tmp_path / "movie.mp4"
    assert mp4 in paths and mp4.stat().st_size > 1000
    assert mp4.read_bytes()[4:8] == b"ftyp"
