"""Write the demo catalogs of an invented scenario, from stated true parameters.

    python catalogs/make_demo.py [--out DIR]

Every source, name and coordinate here is invented. The files are generated
deterministically (fixed seeds, rounded values), so rerunning the script
rewrites byte-identical files:

* ``demo_disk.ecsv``   -- 8 clumps on a ring in the disk of the protostar
  "Quillmere IRS 1", masses in Jupiter masses, offsets in au;
* ``demo_cloud.ecsv``  -- 30 cores of the sheet-like "Harrowfell" cloud, RA/Dec
  and 1.3 mm fluxes;
* ``demo_survey.ecsv`` -- six small disks "Sablemoor A" to "Sablemoor F", one
  ``group`` each, with per-group metadata;
* ``demo_rings.ecsv``  -- 17 clumps on three rings from 55 to 280 au in the disk of
  "Orlenhaven IRS 2", whose surface density and temperature fall off as power laws of
  radius (for ``profile = "power-law"``).

The disk catalogs also state how they were observed: the beam (``beam_major``,
``beam_minor``, ``beam_pa``) and the detection limit (``mass_limit``), both chosen so
that every clump of the catalog is resolved and above the limit, as in a real map.

The true conditions go into each file's header (``true_parameters``), together
with the forward-model values they imply (``derived``, from :func:`infer.physics.predict`).
"""

from __future__ import annotations

import argparse
from pathlib import Path

import astropy.units as u
import numpy as np
from astropy.coordinates import SkyCoord
from astropy.table import Table

from infer import dust_flux, predict, project_to_sky

SEED = 20240611
HERE = Path(__file__).resolve().parent

DISK = {
    "surface_density": "60 g/cm2", "temperature": "35 K", "stellar_mass": "0.5 solMass",
    "radius": "120 au", "mass_to_flux": 2.0, "ionization": 1e-10, "external_pressure": "0 dyn/cm2",
}
CLOUD = {
    "surface_density": "0.05 g/cm2", "temperature": "12 K", "mass_to_flux": 2.0,
    "cosmic_ray_rate": "1e-17 1/s", "external_pressure": "0 dyn/cm2",
}
#: name -> (true conditions, distance, inclination, position angle, number of clumps)
SURVEY = {
    "Sablemoor A": ({"surface_density": "60 g/cm2", "temperature": "30 K", "stellar_mass": "0.6 solMass",
                     "radius": "70 au", "mass_to_flux": 0.8, "ionization": 1e-13}, 150, 25, 40, 7),
    "Sablemoor B": ({"surface_density": "40 g/cm2", "temperature": "25 K", "stellar_mass": "0.3 solMass",
                     "radius": "100 au", "mass_to_flux": 1.5, "ionization": 1e-12}, 150, 50, 100, 8),
    "Sablemoor C": ({"surface_density": "80 g/cm2", "temperature": "40 K", "stellar_mass": "0.8 solMass",
                     "radius": "60 au", "mass_to_flux": 2.5, "ionization": 1e-11}, 310, 15, 160, 6),
    "Sablemoor D": ({"surface_density": "30 g/cm2", "temperature": "20 K", "stellar_mass": "0.4 solMass",
                     "radius": "120 au", "mass_to_flux": 3.5, "ionization": 1e-10}, 310, 60, 20, 8),
    "Sablemoor E": ({"surface_density": "50 g/cm2", "temperature": "30 K", "stellar_mass": "0.5 solMass",
                     "radius": "90 au", "mass_to_flux": 5.0, "ionization": 1e-9}, 390, 35, 135, 7),
    "Sablemoor F": ({"surface_density": "70 g/cm2", "temperature": "35 K", "stellar_mass": "1.0 solMass",
                     "radius": "75 au", "mass_to_flux": 1.1, "ionization": 3e-12}, 390, 45, 75, 6),
}
#: Orlenhaven IRS 2: conditions at the reference radius, power-law indices, ring radii (au)
RINGS = {
    "surface_density": "60 g/cm2", "temperature": "35 K", "stellar_mass": "0.6 solMass",
    "reference_radius": "100 au", "surface_density_index": 1.5, "temperature_index": 0.5,
    "mass_to_flux": 2.0, "ionization": 1e-10, "external_pressure": "0 dyn/cm2",
}
#: each ring's radius follows the previous one by lambda_m at their mean radius
RING_RADII = (55.0, 127.34, 280.48)
RING_CLUMPS = (6, 6, 5)
SPACING_SCATTER_DEX = 0.1
MASS_SCATTER_DEX = 0.15
RADIAL_SCATTER = 0.02          # fractional scatter of the ring radius
LATTICE_JITTER = 0.1           # per coordinate, in units of the lattice spacing


def _r(x, digits: int) -> np.ndarray:
    """Round to ``digits`` significant digits (stable text in the files)."""
    x = np.asarray(x, dtype=float)
    return np.array([float(f"{v:.{digits}g}") for v in np.ravel(x)]).reshape(x.shape)


def derived(conditions: dict) -> dict:
    """Forward-model values implied by the true conditions (rounded)."""
    o = predict(**{k: v for k, v in conditions.items()})
    out = {
        "wavelength": f"{o.wavelength.to_value(u.au):.5g} au",
        "fragment_mass": f"{o.fragment_mass.to_value(u.M_jup):.5g} jupiterMass",
        "growth_time": f"{o.growth_time.to_value(u.yr):.5g} yr",
        "toomre_q": float(f"{float(o.toomre_q.value):.4g}"),
        "field": f"{o.field.to_value(u.mG):.4g} mG",
        "ionization": float(f"{float(o.ionization.value):.4g}"),
        "eta_ad": f"{o.eta_ad.to_value(u.cm**2 / u.s):.4g} cm2 / s",
        "eta_ohm": f"{o.eta_ohm.to_value(u.cm**2 / u.s):.4g} cm2 / s",
    }
    return out


def _ring(rng, n: int, radius: float, lam: float):
    """n clumps on a ring, consecutive arcs lam * 10^(N(0, 0.1 dex)); disk-plane au."""
    arcs = lam * 10 ** (SPACING_SCATTER_DEX * rng.standard_normal(n - 1))
    phi = rng.uniform(0, 2 * np.pi) + np.concatenate([[0.0], np.cumsum(arcs / radius)])
    rad = radius * (1 + RADIAL_SCATTER * rng.standard_normal(n))
    return rad * np.cos(phi), rad * np.sin(phi)


def _masses(rng, n: int, m_frag: float):
    """True masses m_frag 10^(N(0, 0.15 dex)); observed with 10-20 % errors."""
    true = m_frag * 10 ** (MASS_SCATTER_DEX * rng.standard_normal(n))
    frac = rng.uniform(0.10, 0.20, n)
    obs = true * np.exp(frac * rng.standard_normal(n))
    return obs, frac * obs


def _disk_rows(rng, conditions, n, inc, pa, pos_err):
    o = predict(**conditions)
    lam = float(o.wavelength.to_value(u.au))
    m_frag = float(o.fragment_mass.to_value(u.M_jup))
    radius = u.Quantity(conditions["radius"]).to_value(u.au)
    xd, yd = _ring(rng, n, radius, lam)
    sx, sy = project_to_sky(xd * u.au, yd * u.au, inclination=inc * u.deg, position_angle=pa * u.deg)
    sx = sx.value + pos_err * rng.standard_normal(n)
    sy = sy.value + pos_err * rng.standard_normal(n)
    mass, mass_err = _masses(rng, n, m_frag)
    return sx, sy, mass, mass_err


def _truth(conditions: dict, *, ring: bool = True, **extra) -> dict:
    out = dict(conditions)
    out.setdefault("external_pressure", "0 dyn/cm2")
    if ring:
        out["spacing_scatter_dex"] = SPACING_SCATTER_DEX
    out["mass_scatter_dex"] = MASS_SCATTER_DEX
    out.update(extra)
    return out


def make_disk(rng) -> Table:
    inc, pa, dist, pos_err, n = 38.0, 122.0, 230.0, 1.5, 8
    sx, sy, mass, mass_err = _disk_rows(rng, DISK, n, inc, pa, pos_err)
    t = Table()
    t["id"] = [f"QM-{k + 1}" for k in range(n)]
    t["x"] = _r(sx, 5) * u.au
    t["y"] = _r(sy, 5) * u.au
    t["pos_err"] = np.full(n, pos_err) * u.au
    t["mass"] = _r(mass, 4) * u.M_jup
    t["mass_err"] = _r(mass_err, 3) * u.M_jup
    t.meta.update({
        "object": "Quillmere IRS 1 (invented protostar; demo of the infer package)",
        "distance": f"{dist:g} pc", "inclination": f"{inc:g} deg", "position_angle": f"{pa:g} deg",
        # the map's beam (27.6 x 20.7 au at 230 pc, well below the 55-81 au spacings) and its
        # 5-sigma limit, half the lightest clump
        "beam_major": "0.12 arcsec", "beam_minor": "0.09 arcsec", "beam_pa": "25 deg",
        "mass_limit": "12 jupiterMass",
        "local_conditions": {k: DISK[k] for k in ("surface_density", "temperature", "stellar_mass",
                                                  "radius", "external_pressure")},
        "true_parameters": _truth(DISK, radial_scatter=RADIAL_SCATTER, position_error="1.5 au",
                                  number_of_clumps=n),
        "derived": derived(DISK),
        "generator": f"catalogs/make_demo.py, seed {SEED}",
    })
    return t


def _hex_lattice(nx: int, ny: int, a: float) -> tuple[np.ndarray, np.ndarray]:
    i, j = np.meshgrid(np.arange(nx), np.arange(ny))
    x = a * (i + 0.5 * (j % 2))
    y = a * (np.sqrt(3) / 2) * j
    return (x - x.mean()).ravel(), (y - y.mean()).ravel()


def make_cloud(rng) -> Table:
    inc, pa, dist, pos_err = 20.0, 65.0, 300.0, 0.5            # pos_err in arcsec
    center = SkyCoord(201.365 * u.deg, 52.1875 * u.deg, frame="icrs")
    dust = {"wavelength": 1.3 * u.mm, "dust_temperature": 12.0 * u.K,
            "dust_opacity": 0.899 * u.cm**2 / u.g, "gas_to_dust": 100.0}
    o = predict(**CLOUD)
    lam = float(o.wavelength.to_value(u.au))
    m_frag = float(o.fragment_mass.to_value(u.M_jup))
    xd, yd = _hex_lattice(6, 5, lam)
    n = xd.size
    xd = xd + LATTICE_JITTER * lam * rng.standard_normal(n)
    yd = yd + LATTICE_JITTER * lam * rng.standard_normal(n)
    sx, sy = project_to_sky(xd * u.au, yd * u.au, inclination=inc * u.deg, position_angle=pa * u.deg)
    east = sx.value / dist + pos_err * rng.standard_normal(n)            # arcsec = au / pc
    north = sy.value / dist + pos_err * rng.standard_normal(n)
    pos = center.spherical_offsets_by(east * u.arcsec, north * u.arcsec)
    true_mass = m_frag * 10 ** (MASS_SCATTER_DEX * rng.standard_normal(n)) * u.M_jup
    flux = dust_flux(true_mass, distance=dist * u.pc, frequency=dust["wavelength"],
                     temperature=dust["dust_temperature"], opacity=dust["dust_opacity"],
                     gas_to_dust=dust["gas_to_dust"]).to_value(u.Jy)
    flux_err = np.hypot(0.10 * flux, 0.005)                 # 10 % calibration, 5 mJy noise
    obs = np.abs(flux + flux_err * rng.standard_normal(n))
    t = Table()
    t["id"] = [f"HF-{k + 1:02d}" for k in range(n)]
    t["ra"] = np.round(pos.ra.deg, 7) * u.deg
    t["dec"] = np.round(pos.dec.deg, 7) * u.deg
    t["pos_err"] = np.full(n, pos_err) * u.arcsec
    t["flux"] = _r(obs, 4) * u.Jy
    t["flux_err"] = _r(flux_err, 3) * u.Jy
    t.meta.update({
        "object": "Harrowfell sheet (invented cloud; demo of the infer package)",
        "distance": f"{dist:g} pc", "inclination": f"{inc:g} deg", "position_angle": f"{pa:g} deg",
        "center_ra": "201.365 deg", "center_dec": "52.1875 deg",
        "wavelength": "1.3 mm", "dust_temperature": "12 K", "dust_temperature_err": "2 K",
        "dust_opacity": "0.899 cm2 / g", "gas_to_dust": 100.0,
        "local_conditions": {k: CLOUD[k] for k in ("surface_density", "temperature",
                                                   "external_pressure")},
        "true_parameters": _truth(CLOUD, ring=False, lattice="hexagonal, 6 x 5, spacing = wavelength",
                                  lattice_jitter=LATTICE_JITTER, position_error="0.5 arcsec",
                                  number_of_clumps=n),
        "derived": derived(CLOUD),
        "generator": f"catalogs/make_demo.py, seed {SEED}",
    })
    return t


def make_survey(rng) -> Table:
    rows: dict[str, list] = {k: [] for k in ("group", "id", "x", "y", "pos_err", "mass", "mass_err")}
    groups = {}
    for k, (name, (cond, dist, inc, pa, n)) in enumerate(SURVEY.items()):
        conditions = dict(cond, external_pressure="0 dyn/cm2")
        pos_err = 1.0
        sx, sy, mass, mass_err = _disk_rows(rng, conditions, n, inc, pa, pos_err)
        letter = "ABCDEF"[k]
        rows["group"] += [name] * n
        rows["id"] += [f"S{letter}-{j + 1}" for j in range(n)]
        rows["x"] += list(_r(sx, 5))
        rows["y"] += list(_r(sy, 5))
        rows["pos_err"] += [pos_err] * n
        rows["mass"] += list(_r(mass, 4))
        rows["mass_err"] += list(_r(mass_err, 3))
        groups[name] = {
            "distance": f"{dist:g} pc", "inclination": f"{inc:g} deg", "position_angle": f"{pa:g} deg",
            "local_conditions": {k2: conditions[k2] for k2 in ("surface_density", "temperature",
                                                               "stellar_mass", "radius",
                                                               "external_pressure")},
            "true_parameters": _truth(conditions, radial_scatter=RADIAL_SCATTER,
                                      position_error="1 au", number_of_clumps=n),
            "derived": derived(conditions),
        }
    t = Table()
    t["group"] = rows["group"]
    t["id"] = rows["id"]
    t["x"] = np.array(rows["x"]) * u.au
    t["y"] = np.array(rows["y"]) * u.au
    t["pos_err"] = np.array(rows["pos_err"]) * u.au
    t["mass"] = np.array(rows["mass"]) * u.M_jup
    t["mass_err"] = np.array(rows["mass_err"]) * u.M_jup
    t.meta.update({
        "object": "Sablemoor survey: six invented small disks (demo of the infer package)",
        "groups": groups,
        "generator": f"catalogs/make_demo.py, seed {SEED}",
    })
    return t


def rings_conditions(radius_au) -> dict:
    """The conditions of Orlenhaven IRS 2 at radii (au): power laws about the reference radius."""
    r = np.asarray(radius_au, dtype=float)
    ratio = r / u.Quantity(RINGS["reference_radius"]).to_value(u.au)
    return {
        "surface_density": u.Quantity(RINGS["surface_density"]) * ratio ** -RINGS["surface_density_index"],
        "temperature": u.Quantity(RINGS["temperature"]) * ratio ** -RINGS["temperature_index"],
        "stellar_mass": RINGS["stellar_mass"], "radius": r * u.au,
        "mass_to_flux": RINGS["mass_to_flux"], "ionization": RINGS["ionization"],
        "external_pressure": RINGS["external_pressure"],
    }


def make_rings(rng) -> Table:
    inc, pa, dist, pos_err = 30.0, 65.0, 160.0, 1.0
    o = predict(**rings_conditions(RING_RADII))
    lam = o.wavelength.to_value(u.au)
    m_frag = o.fragment_mass.to_value(u.M_jup)
    start = rng.uniform(0, 2 * np.pi)
    xs, ys, masses, errs = [], [], [], []
    for radius, n, lam_k, m_k in zip(RING_RADII, RING_CLUMPS, lam, m_frag, strict=True):
        arcs = lam_k * 10 ** (SPACING_SCATTER_DEX * rng.standard_normal(n - 1))
        # arcs centred on a common azimuth, so that neighbouring rings face each other
        phi = start + np.concatenate([[0.0], np.cumsum(arcs / radius)])
        phi -= 0.5 * (phi[-1] - phi[0])
        rad = radius * (1 + RADIAL_SCATTER * rng.standard_normal(n))
        xs.append(rad * np.cos(phi))
        ys.append(rad * np.sin(phi))
        mass, mass_err = _masses(rng, n, m_k)
        masses.append(mass)
        errs.append(mass_err)
    xd, yd = np.concatenate(xs), np.concatenate(ys)
    n = xd.size
    sx, sy = project_to_sky(xd * u.au, yd * u.au, inclination=inc * u.deg, position_angle=pa * u.deg)
    sx = sx.value + pos_err * rng.standard_normal(n)
    sy = sy.value + pos_err * rng.standard_normal(n)
    t = Table()
    t["id"] = [f"OH-{k + 1:02d}" for k in range(n)]
    t["x"] = _r(sx, 5) * u.au
    t["y"] = _r(sy, 5) * u.au
    t["pos_err"] = np.full(n, pos_err) * u.au
    t["mass"] = _r(np.concatenate(masses), 4) * u.M_jup
    t["mass_err"] = _r(np.concatenate(errs), 3) * u.M_jup
    t.meta.update({
        "object": "Orlenhaven IRS 2 (invented protostar; demo of the infer package)",
        "distance": f"{dist:g} pc", "inclination": f"{inc:g} deg", "position_angle": f"{pa:g} deg",
        # beam 16 x 12.8 au at 160 pc, below the 40-200 au spacings; limit below every clump
        "beam_major": "0.1 arcsec", "beam_minor": "0.08 arcsec", "beam_pa": "140 deg",
        "mass_limit": "10 jupiterMass",
        "local_conditions": {k: RINGS[k] for k in ("surface_density", "temperature",
                                                   "reference_radius", "stellar_mass",
                                                   "external_pressure")},
        "true_parameters": _truth(RINGS, radial_scatter=RADIAL_SCATTER, position_error="1 au",
                                  ring_radii=[f"{r:g} au" for r in RING_RADII],
                                  clumps_per_ring=list(RING_CLUMPS), number_of_clumps=n),
        "derived": {f"ring {k + 1} at {r:g} au": {"wavelength": f"{lk:.5g} au",
                                                  "fragment_mass": f"{mk:.5g} jupiterMass",
                                                  "toomre_q": float(f"{float(qk):.4g}")}
                    for k, (r, lk, mk, qk) in enumerate(zip(RING_RADII, lam, m_frag,
                                                            o.toomre_q.value, strict=True))},
        "generator": f"catalogs/make_demo.py, seed {SEED}",
    })
    return t


def write_all(out: Path) -> list[Path]:
    """Generate the four catalogs into ``out``; returns the paths written."""
    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for k, (name, maker) in enumerate((("demo_disk.ecsv", make_disk), ("demo_cloud.ecsv", make_cloud),
                                       ("demo_survey.ecsv", make_survey),
                                       ("demo_rings.ecsv", make_rings))):
        table = maker(np.random.default_rng([SEED, k]))
        path = out / name
        table.write(path, format="ascii.ecsv", overwrite=True)
        paths.append(path)
    return paths


def _print_truth(paths: list[Path]) -> None:
    for path in paths:
        meta = Table.read(path, format="ascii.ecsv").meta
        print(f"{path.name}: {meta['object']}")
        entries = meta["groups"].items() if "groups" in meta else [("", meta)]
        for name, m in entries:
            lead = f"  {name}: " if name else "  "
            truth = ", ".join(f"{k}={v}" for k, v in m["true_parameters"].items())
            print(f"{lead}true {truth}")
            d = m["derived"]
            for where, dd in (d.items() if "wavelength" not in d else [("", d)]):
                at = f" at {where}" if where else ""
                print(f"{' ' * len(lead)}-> lambda_m{at} = {dd['wavelength']}, M_frag = "
                      f"{dd['fragment_mass']}, Q = {dd['toomre_q']}"
                      + (f", x_e = {dd['ionization']}" if "ionization" in dd else ""))


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=HERE, help="output folder (default: catalogs/)")
    args = parser.parse_args(argv)
    _print_truth(write_all(args.out))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
