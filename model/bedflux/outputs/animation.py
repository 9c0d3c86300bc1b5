"""An animation of a transient run: heads in the section and the bed-flux profile, frame by frame.

Each frame shows, for one output time, the heads over the section (the head colour scale is
fixed over the whole run, so a flood pulse is seen spreading into the banks), the stage along
the wet bed, the bed-flux profile with gaining and losing stretches shaded (fixed limits), and
the stage hydrograph with a marker at the frame's time. The frames are written as a looping GIF
through Pillow and, when ``ffmpeg`` is on the PATH, also as an MP4 video. Files are written
atomically; a steady result has no animation.
"""
from __future__ import annotations

import shutil
import subprocess
import warnings
from pathlib import Path

import numpy as np
import xarray as xr
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from PIL import Image

from bedflux.outputs.atomic import atomic_path, write_with
from bedflux.outputs.figures import GAINING, HEAD_MAP, LOSING, partial_label
from bedflux.scenario.units import flux_factor

#: Default upper limit on the number of frames (outputs are thinned evenly beyond it).
MAX_FRAMES = 60
#: Default frame rate (frames per second).
FPS = 8


def frame_indices(n_times: int, max_frames: int = MAX_FRAMES) -> np.ndarray:
    """Indices of the output times drawn as frames.

    Parameters
    ----------
    n_times
        Number of output times in the result.
    max_frames
        Upper limit on the number of frames.

    Returns
    -------
    numpy.ndarray
        Every index when ``n_times <= max_frames``; otherwise ``max_frames`` indices spread
        evenly from the first to the last output, both included.
    """
    if n_times <= 0:
        return np.zeros(0, dtype=int)
    if max_frames < 2:
        raise ValueError("max_frames must be at least 2")
    if n_times <= max_frames:
        return np.arange(n_times)
    return np.unique(np.round(np.linspace(0, n_times - 1, max_frames)).astype(int))


def _limits(values: np.ndarray, symmetric_about_zero: bool = False) -> tuple[float, float]:
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return (-1.0, 1.0)
    lo, hi = float(finite.min()), float(finite.max())
    if symmetric_about_zero:
        lo, hi = min(lo, 0.0), max(hi, 0.0)
    pad = 0.08 * (hi - lo) if hi > lo else max(abs(hi), 1e-12) * 0.1
    return lo - pad, hi + pad


def render_frames(ds: xr.Dataset, unit: str = "m/d", max_frames: int = MAX_FRAMES,
                  size: tuple[float, float] = (7.2, 5.6), dpi: int = 80) -> list[Image.Image]:
    """Draw the frames of a transient result as RGB images (all of one size).

    Parameters
    ----------
    ds
        A transient result of :func:`bedflux.simulate` (or read back from ``result.nc``).
    unit
        Display unit of the bed flux (``m/d``, ``mm/d``, ``cm/d``, ``cm/s``, ``m/s``).
    max_frames
        Upper limit on the number of frames (see :func:`frame_indices`).
    size, dpi
        Figure size in inches and resolution.

    Returns
    -------
    list of PIL.Image.Image
        One image per frame.
    """
    if "time" not in ds.dims or ds.sizes["time"] < 2:
        raise ValueError("an animation needs a transient result with two or more output times")
    fac = flux_factor(unit)
    idx = frame_indices(ds.sizes["time"], max_frames)
    t_h = ds["time"].values / 3600.0
    x = ds["x"].values
    xe, ze = ds["x_edge"].values, ds["z_edge"].values
    head = ds["head"].values
    flux = ds["bed_flux"].values * fac
    stage = ds["stage"].values
    ground = ds["ground"].values
    h_lo, h_hi = _limits(head)
    q_lo, q_hi = _limits(flux, symmetric_about_zero=True)

    fig = Figure(figsize=size, dpi=dpi)
    canvas = FigureCanvasAgg(fig)
    gs = fig.add_gridspec(3, 2, height_ratios=[2.3, 1.1, 0.8], width_ratios=[40, 1], hspace=0.45,
                          wspace=0.04, left=0.1, right=0.9, top=0.93, bottom=0.08)
    ax = fig.add_subplot(gs[0, 0])
    cax = fig.add_subplot(gs[0, 1])
    axf = fig.add_subplot(gs[1, 0], sharex=ax)
    axs = fig.add_subplot(gs[2, 0])
    for a in (ax, axf, axs):
        a.spines["top"].set_visible(False)
        a.spines["right"].set_visible(False)
        a.tick_params(labelsize=7)

    mesh = ax.pcolormesh(xe, ze, np.ma.masked_invalid(head[0]), cmap=HEAD_MAP, vmin=h_lo, vmax=h_hi,
                         shading="flat")
    cb = fig.colorbar(mesh, cax=cax)
    cb.set_label("head (m)", fontsize=7)
    cb.ax.tick_params(labelsize=6)
    ax.plot(x, ground, color="#4d3319", lw=1.2)
    (stage_line,) = ax.plot(x, np.full_like(x, np.nan), color="#2166ac", lw=2.0)
    water_table = ds["water_table"].values if "water_table" in ds else None
    if water_table is not None:  # variably saturated run: the water table rising into the banks and draining
        (table_line,) = ax.plot(x, water_table[0], color="w", lw=1.2, ls="--")
    ax.set_ylabel("elevation (m)", fontsize=8)
    title = ax.set_title("", fontsize=9)

    axf.axhline(0.0, color="0.5", lw=0.8)
    (flux_line,) = axf.plot(x, flux[0], color="k", lw=1.1)
    axf.set_ylim(q_lo, q_hi)
    axf.set_ylabel(f"bed flux ({unit})\nup = gaining", fontsize=7)
    axf.set_xlabel("x (m)", fontsize=7)
    shading: list = []
    levels = np.linspace(h_lo, h_hi, 14)[1:-1]
    zc = ds["z"].values
    contours = None

    axs.plot(t_h, stage, color="#2166ac", lw=1.2)
    (marker,) = axs.plot([t_h[0]], [stage[0]], "o", color="k", ms=4)
    now = axs.axvline(t_h[0], color="0.4", lw=0.8)
    axs.set_xlabel("time (h)", fontsize=7)
    axs.set_ylabel("stage (m)", fontsize=7)

    name = ds.attrs.get("title", "")
    stopped = partial_label(ds)
    if stopped:
        ax.text(0.99, 0.03, stopped, transform=ax.transAxes, ha="right", va="bottom", color=LOSING, fontsize=7,
                fontweight="bold", bbox={"facecolor": "white", "edgecolor": LOSING, "pad": 2}, zorder=5)
    frames = []
    for i in idx:
        mesh.set_array(np.ma.masked_invalid(head[i]).ravel())
        if contours is not None:
            contours.remove()
            contours = None
        if min(head[i].shape) > 1 and np.isfinite(head[i]).sum() > 4:
            contours = ax.contour(x, zc, np.ma.masked_invalid(head[i]), levels=levels, colors="w",
                                  linewidths=0.5, alpha=0.8)
        q = flux[i]
        wet = np.isfinite(q)
        stage_line.set_ydata(np.where(wet, stage[i], np.nan))
        if water_table is not None:
            table_line.set_ydata(water_table[i])
        flux_line.set_ydata(q)
        for artist in shading:
            artist.remove()
        qn = np.nan_to_num(q)
        shading = [axf.fill_between(x, q, 0, where=qn > 0, color=GAINING, alpha=0.45, lw=0),
                   axf.fill_between(x, q, 0, where=qn < 0, color=LOSING, alpha=0.45, lw=0)]
        marker.set_data([t_h[i]], [stage[i]])
        now.set_xdata([t_h[i], t_h[i]])
        title.set_text(f"{name}\nt = {t_h[i]:.1f} h, stage {stage[i]:.3f} m")
        canvas.draw()
        rgba = np.asarray(canvas.buffer_rgba())
        frames.append(Image.fromarray(rgba[..., :3].copy(), "RGB"))
    return frames


def _write_mp4(frames: list[Image.Image], target: Path, fps: int, ffmpeg: str) -> bool:
    """Pipe the frames to ffmpeg; return False (with a warning) when ffmpeg fails."""
    w, h = frames[0].size
    with atomic_path(target) as tmp:
        cmd = [ffmpeg, "-y", "-loglevel", "error", "-f", "rawvideo", "-pix_fmt", "rgb24",
               "-s", f"{w}x{h}", "-r", str(fps), "-i", "-",
               "-vf", "pad=ceil(iw/2)*2:ceil(ih/2)*2", "-pix_fmt", "yuv420p", "-f", "mp4", str(tmp)]
        data = b"".join(f.tobytes() for f in frames)
        try:
            proc = subprocess.run(cmd, input=data, capture_output=True, timeout=300)
        except (OSError, subprocess.TimeoutExpired) as err:
            warnings.warn(f"ffmpeg could not write {target.name}: {err}", stacklevel=3)
            raise _Skip from None
        if proc.returncode != 0 or not tmp.exists() or tmp.stat().st_size == 0:
            msg = proc.stderr.decode("utf-8", "replace").strip()[-400:]
            warnings.warn(f"ffmpeg could not write {target.name} (exit {proc.returncode}): {msg}",
                          stacklevel=3)
            raise _Skip
    return True


class _Skip(Exception):
    """Internal: leave the MP4 out (atomic_path has removed its temporary file)."""


def animate(ds: xr.Dataset, path_without_suffix: str | Path, unit: str = "m/d",
            max_frames: int = MAX_FRAMES, fps: int = FPS) -> list[Path]:
    """Write the flood-pulse animation of a transient result.

    Parameters
    ----------
    ds
        Result of :func:`bedflux.simulate` or :func:`bedflux.outputs.files.read_result`.
    path_without_suffix
        Target path without suffix: ``OUT/animation`` gives ``OUT/animation.gif`` and, when
        ``ffmpeg`` is on the PATH, ``OUT/animation.mp4``.
    unit
        Display unit of the bed flux.
    max_frames
        Upper limit on the number of frames; longer runs are thinned evenly (first and last
        output kept).
    fps
        Frames per second.

    Returns
    -------
    list of pathlib.Path
        The files written: empty for a steady result (nothing to animate), the GIF, and the MP4
        when ffmpeg is present and succeeded (a failure of ffmpeg is a warning, not an error).
    """
    if "time" not in ds.dims or ds.sizes["time"] < 2:
        return []
    base = Path(path_without_suffix)
    frames = render_frames(ds, unit=unit, max_frames=max_frames)
    gif = base.with_name(base.name + ".gif")
    duration = max(int(round(1000 / fps)), 20)

    def write_gif(tmp: Path) -> None:
        # one shared palette keeps the colours steady from frame to frame
        picks = [frames[i] for i in np.unique(np.linspace(0, len(frames) - 1, 12).astype(int))]
        w, h = picks[0].size
        montage = Image.new("RGB", (w, h * len(picks)))
        for k, f in enumerate(picks):
            montage.paste(f, (0, h * k))
        palette = montage.quantize(colors=255, method=Image.Quantize.MEDIANCUT)
        paletted = [f.quantize(palette=palette, dither=Image.Dither.NONE) for f in frames]
        paletted[0].save(tmp, format="GIF", save_all=True, append_images=paletted[1:],
                         duration=duration, loop=0, disposal=1)

    write_with(gif, write_gif)
    written = [gif]
    ffmpeg = shutil.which("ffmpeg")
    if ffmpeg:
        mp4 = base.with_name(base.name + ".mp4")
        try:
            _write_mp4(frames, mp4, fps, ffmpeg)
            written.append(mp4)
        except _Skip:
            pass
    return written
