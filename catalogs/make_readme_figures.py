"""Write the small PNG figures of the README walkthrough into docs/figures/.

    python catalogs/make_readme_figures.py                 # fits the demo disk first (a few minutes)
    python catalogs/make_readme_figures.py --fit runs/demo_disk --rings-fit runs/demo_rings
                                                           # or reuse finished fits

Figures (each kept below ~150 kB: modest dpi, 256-colour palette PNG):

* ``demo_corner.png``        corner plot of the demo disk posterior
* ``demo_predictive.png``    posterior predictive check of spacings and masses
* ``demo_spectrum_band.png`` growth rate against wavelength over posterior samples
* ``demo_spectrum.png``      the forward-model spectrum (as ``infer spectrum`` draws it) for the
                             catalog's local conditions at the posterior medians of the
                             mass-to-flux ratio and ionization fraction
* ``demo_radial.png``        radial profile of the ringed demo disk (demo_rings), posterior
                             bands of the wavelength and fragment mass against radius

The script prints the equivalent ``infer spectrum`` command for the last one.
"""

from __future__ import annotations

import argparse
import io
import shutil
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
CATALOG = HERE / "demo_disk.ecsv"
CONFIG = HERE / "demo_disk.toml"
RINGS_CATALOG = HERE / "demo_rings.ecsv"
RINGS_CONFIG = HERE / "demo_rings.toml"


def _png(fig, dpi: int) -> bytes:
    """The figure as a palette PNG (a few times smaller than RGBA for these plots)."""
    from PIL import Image

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
    img = Image.open(io.BytesIO(buf.getvalue())).convert("RGB")
    out = io.BytesIO()
    img.quantize(colors=256, method=Image.Quantize.MEDIANCUT).save(out, format="PNG", optimize=True)
    return out.getvalue()


def _fit(fit_dir: Path | None, max_steps: int, work: Path, catalog: Path = CATALOG,
         config_path: Path = CONFIG) -> Path:
    if fit_dir is not None:
        return fit_dir
    from infer import fit_catalog, load_config

    config = load_config(config_path).with_sampler(max_steps=max_steps)
    out = work / catalog.stem
    print(f"fitting {catalog.name} ({config.sampler.walkers} walkers, up to {max_steps} steps) ...",
          flush=True)
    fit_catalog(catalog, config, out, progress=False, plots=False)
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--fit", type=Path, default=None, help="a finished fit folder of the demo disk")
    ap.add_argument("--rings-fit", type=Path, default=None,
                    help="a finished fit folder of the ringed demo disk (demo_rings)")
    ap.add_argument("--out", type=Path, default=ROOT / "docs" / "figures", help="output folder")
    ap.add_argument("--max-steps", type=int, default=3000, help="chain length when fitting here")
    args = ap.parse_args(argv)

    import numpy as np

    from infer import (
        band_figure,
        corner_figure,
        growth_spectrum,
        load_fit,
        posterior_from_chain,
        predictive_figure,
        radial_band,
        radial_figure,
        spectrum_band,
        spectrum_figure,
    )
    from infer.outputs.files import atomic_write_bytes  # internal: the package's atomic file writer

    args.out.mkdir(parents=True, exist_ok=True)
    work = Path(tempfile.mkdtemp(prefix="readme_figures_"))
    try:
        _, model, region, chain, tau = load_fit(_fit(args.fit, args.max_steps, work))
        post = posterior_from_chain(model, chain, tau)
        name = str(region.meta.get("object", region.name)).split(" (")[0]
        figures = {
            "demo_corner.png": (corner_figure(post, model, title=name), 56),
            "demo_predictive.png": (predictive_figure(post, model, title=name), 70),
            "demo_spectrum_band.png": (band_figure(spectrum_band(post, model), title=name), 90),
        }
        local = dict(region.meta.get("local_conditions", {}))
        mu0 = float(f"{np.median(post.values['mass_to_flux']):.2g}")
        cond = {k: local[k] for k in ("surface_density", "temperature", "stellar_mass", "radius")
                if k in local}
        if "ionization" in post.values:
            x_e = float(f"{np.median(post.values['ionization']):.1g}")
            cond["ionization"] = x_e
        spec = growth_spectrum(mass_to_flux=mu0, **cond)
        figures["demo_spectrum.png"] = (spectrum_figure(spec), 90)
        _, rmodel, rregion, rchain, rtau = load_fit(_fit(args.rings_fit, args.max_steps, work,
                                                         RINGS_CATALOG, RINGS_CONFIG))
        rname = str(rregion.meta.get("object", rregion.name)).split(" (")[0]
        rpost = posterior_from_chain(rmodel, rchain, rtau)
        figures["demo_radial.png"] = (radial_figure(radial_band(rpost, rmodel), title=rname), 70)
        for fname, (fig, dpi) in figures.items():
            data = _png(fig, dpi)
            atomic_write_bytes(args.out / fname, data)
            print(f"{args.out / fname}: {len(data) / 1024:.0f} kB")
        opts = " ".join(f'--{k.replace("_", "-")} "{v}"' for k, v in cond.items()
                        if k != "ionization")
        ion = f" --ionization {cond['ionization']:g}" if "ionization" in cond else ""
        print(f"demo_spectrum.png is: infer spectrum {opts} --mass-to-flux {mu0:g}{ion} "
              f"--out spectrum.png")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
