"""Look at an appendix as a reader does: its PDF pages as PNG, a contact sheet of them, and
the HTML in headless Chromium at a wide and a narrow window. A developer tool, not part of
the package.

    python scripts/look.py studies/seed-coating/study.yaml /tmp/look   # run the study first
    python scripts/look.py out/seed-coating /tmp/look                   # a run folder

Writes into the folder: `pages/p-NN.png` (pdftoppm), `contact.png` (every page, in rows),
`screen-1280.png` and `screen-400.png`. Needs pdftoppm (poppler-utils) and Chromium.
"""

from __future__ import annotations

import argparse
import math
import subprocess
import sys
from pathlib import Path

CHROMIUM = "/usr/bin/chromium"
WIDTHS = (1280, 400)


def run_folder(target: Path, out: Path) -> Path:
    """The run folder of `target`: itself when it holds an appendix, else the study run."""
    if (target / "appendix.pdf").is_file():
        return target
    folder = out / "run"
    subprocess.run([sys.executable, "-m", "appendix", "run", str(target), "--out", str(folder)],
                   check=True)
    return folder


def pages(pdf: Path, out: Path, dpi: int) -> list[Path]:
    """Every page of `pdf` as a PNG at `dpi`, in page order."""
    (out / "pages").mkdir(parents=True, exist_ok=True)
    for old in (out / "pages").glob("p-*.png"):
        old.unlink()
    subprocess.run(["pdftoppm", "-r", str(dpi), "-png", str(pdf), str(out / "pages" / "p")],
                   check=True)
    # pdftoppm pads the page number to the width of the last one, so names sort in order
    return sorted((out / "pages").glob("p-*.png"))


def contact_sheet(images: list[Path], target: Path, columns: int) -> Path:
    """The page images side by side, `columns` to a row, on white with a grey gap."""
    from PIL import Image  # Pillow comes with WeasyPrint

    opened = [Image.open(p) for p in images]
    width = max(i.width for i in opened)
    height = max(i.height for i in opened)
    gap = 8
    rows = math.ceil(len(opened) / columns)
    sheet = Image.new("RGB", (columns * (width + gap) + gap, rows * (height + gap) + gap),
                      (160, 160, 160))
    for k, image in enumerate(opened):
        row, column = divmod(k, columns)
        sheet.paste(image.convert("RGB"), (gap + column * (width + gap), gap + row * (height + gap)))
    sheet.save(target)
    return target


def screenshot(html: Path, target: Path, width: int, height: int) -> Path:
    """The HTML in headless Chromium at a `width` x `height` window."""
    subprocess.run([CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu",
                    "--hide-scrollbars", f"--window-size={width},{height}",
                    f"--screenshot={target}", html.resolve().as_uri()],
                   check=True, capture_output=True)
    return target


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("target", type=Path, help="a study file, or a run folder")
    parser.add_argument("out", type=Path, help="folder to write the pictures into")
    parser.add_argument("--dpi", type=int, default=50)
    parser.add_argument("--columns", type=int, default=6)
    parser.add_argument("--height", type=int, default=2400, help="screenshot height, px")
    args = parser.parse_args(argv)
    args.out.mkdir(parents=True, exist_ok=True)
    folder = run_folder(args.target, args.out)
    shown = pages(folder / "appendix.pdf", args.out, args.dpi)
    print(f"{len(shown)} pages -> {contact_sheet(shown, args.out / 'contact.png', args.columns)}")
    for width in WIDTHS:
        print(screenshot(folder / "appendix.html", args.out / f"screen-{width}.png", width,
                         args.height))
    return 0


if __name__ == "__main__":
    sys.exit(main())
