"""The words of a fit's report: the plain-language paragraph, the inputs and the posterior
table as content blocks (:class:`infer.outputs.pagelayout.Block`)."""

from __future__ import annotations

import numpy as np

from .pagelayout import Block

__all__ = ["paragraph", "input_blocks", "table_block", "status"]

_MODE_TEXT = {
    "ionization": "the ionization fraction x_e is sampled; the ambipolar and Ohmic diffusivities "
                  "follow from it, the field and the midplane density",
    "free": "the ambipolar and Ohmic diffusivities are sampled separately; the growth rate depends "
            "only on their sum",
    "ideal": "flux freezing: the field moves with the gas (no diffusion)",
}


# ---------------------------------------------------------------- numbers
def _g(v: float, digits: int = 3) -> str:
    if v is None or not np.isfinite(v):
        return "n/a"
    return f"{v:.{digits}g}"


def status(ratio: float | None) -> str:
    """What a posterior-over-prior width ratio says: constrained, partly, not (or not assessed)."""
    if ratio is None or not np.isfinite(ratio):
        return "not assessed"
    if ratio < 0.5:
        return "constrained by the data"
    if ratio < 0.9:
        return "partly constrained"
    return "not constrained (follows the prior)"


def _row(table, name):
    for r in table:
        if r["name"] == name:
            return r
    return None


def _interval(r, unit: str = "") -> str:
    u = f" {unit}" if unit else ""
    return f"{_g(r['median'])}{u} (68%: {_g(r['p16'])}-{_g(r['p84'])}{u})"


# --------------------------------------------------------------- paragraph
def _prob(p: float) -> str:
    if p > 0.995:
        return "above 99%"
    if p < 0.005:
        return "below 1%"
    return f"{p:.0%}"


def _prior_range(model, name: str) -> str:
    q = model.priors[name].ppf(np.array([0.025, 0.975]))
    return f"{_g(q[0])} to {_g(q[1])} (95%)"


def paragraph(post, model, region, table, ratios, notes, forecasts, converged) -> str:
    """The plain-language summary for a proposal."""
    obj = str(region.meta.get("object", region.name)).split(" (")[0]
    n = len(region.ids)
    sp = region.spacings.to_value("au")
    m = region.masses.to_value("jupiterMass")
    mode = model.options.diffusion
    body = "disk" if "stellar_mass" in model.priors else "sheet"
    s = [f"We compared the {n} clumps of {obj} (median deprojected spacing "
         f"{np.median(sp):.3g} au, median mass {np.median(m):.3g} Jupiter masses) with the linear "
         f"fragmentation of a magnetized, self-gravitating thin {body}"
         + {"ideal": " under flux freezing.", "free": " with free magnetic diffusivities.",
            "ionization": " whose field slips through the gas at a rate set by its ionization."}[mode]]
    lam, mf = _row(table, "wavelength"), _row(table, "fragment_mass")
    if lam is not None and mf is not None:
        s.append(f"The posterior places the fastest-growing wavelength at {_interval(lam, 'au')} and "
                 f"the fragment mass at {_interval(mf, 'Jupiter masses')}.")
    mu = post.values["mass_to_flux"]
    r_mu = ratios.get("mass_to_flux")
    b = _row(table, "field")
    if "mass_to_flux" in post.names:
        p_super = float(np.mean(mu > 1.0))
        if status(r_mu).startswith("not"):
            s.append(f"The fragmentation alone does not determine the mass-to-flux ratio: its "
                     f"posterior ({_g(np.quantile(mu, 0.16))}-{_g(np.quantile(mu, 0.84))} times "
                     f"critical, 68%) follows the prior, so these data do not measure the field "
                     f"strength.")
        else:
            word = "" if status(r_mu).startswith("constrained") else "partly "
            s.append(f"The data {word}constrain the mass-to-flux ratio to "
                     f"{_interval(_row(table, 'mass_to_flux'))} times the critical value"
                     + (f", a field of {_interval(b, 'mG')}" if b is not None else "")
                     + ("; under flux freezing only a supercritical disk (mass-to-flux above 1) "
                        "fragments at all." if mode == "ideal" else
                        f"; the probability that the {body} is magnetically supercritical is "
                        f"{_prob(p_super)}."))
    if mode == "ionization" and "ionization" in post.names:
        x = _row(table, "ionization")
        if status(ratios.get("ionization")).startswith("not"):
            s.append("The ionization fraction, and with it the ambipolar and Ohmic diffusivities, "
                     "is not constrained: the observed scales are reproduced across its prior range.")
        elif status(ratios.get("ionization")).startswith("partly"):
            s.append(f"The data only partly constrain the ionization fraction: 68% of the "
                     f"posterior lies between {_g(x['p16'])} and {_g(x['p84'])} (95%: "
                     f"{_g(x['p02_5'])}-{_g(x['p97_5'])}), against a prior from "
                     f"{_prior_range(model, 'ionization')}.")
        else:
            s.append(f"The ionization fraction is {_interval(x)}.")
    elif mode == "free":
        et = _row(table, "eta_total")
        s.append(f"Only the sum of the diffusivities enters the growth rate; it is "
                 f"{_interval(et, 'cm2/s')}, and the split between ambipolar and Ohmic diffusion "
                 f"comes from the priors.")
    pairs = [nt.split(" are degenerate")[0] for nt in notes if " are degenerate" in nt]
    if pairs:
        s.append("Degenerate combinations (quote them jointly): " + "; ".join(pairs) + ".")
    for f in forecasts:
        s.append(f.sentence())
    if not converged:
        s.append("The chain has not converged; these numbers are provisional.")
    s.append("All of this is conditional on the model: linear theory sets the initial fragment "
             "scale, while clumps may since have migrated, merged or accreted, and projection and "
             "catalog completeness affect the measured spacings.")
    return " ".join(s)


# ----------------------------------------------------------------- inputs
def _meta_text(v) -> str:
    try:
        import astropy.units as u

        if isinstance(v, u.Quantity):
            return f"{v.value:.4g} {v.unit.to_string()}".strip()
    except ImportError:  # pragma: no cover - astropy is a dependency
        pass
    return str(v)


def _profile_text(model) -> str:
    """How the conditions vary across the region (one radius, or power laws of radius)."""
    if model.plan is None:
        return "Profile: local (one set of conditions for all clumps)."
    pr = model.priors
    idx = ", ".join(f"{k} {pr[k].describe()}" for k in
                    ("surface_density_index", "temperature_index", "mass_to_flux_index",
                     "ionization_index") if k in pr)
    return (f"Profile: power law about reference_radius = {pr['reference_radius'].value:.4g} au, "
            f"X(r) = X(r_0) (r / r_0)^-index ({idx}); Keplerian rotation at each radius; each "
            f"spacing is compared with lambda_m at the mean radius of its two clumps and each mass "
            f"with M_frag at its clump's radius. Derived quantities are given at reference_radius.")


def input_blocks(config, model, region, diag, post) -> list[Block]:
    """The report's first page: model, priors, geometry and dust conventions, catalog, fit."""
    o = model.options
    blocks = [Block("h2", "Model")]
    kap = model.priors.get("kappa")
    if "stellar_mass" in model.priors:
        rot = "Keplerian rotation from the stellar mass and radius"
    elif kap is not None and kap.fixed and kap.value == 0:
        rot = "no rotation"
    else:
        rot = "epicyclic frequency kappa as given"
    blocks += [Block("li", f"Thin, isothermal, self-gravitating sheet threaded by a vertical field; "
                           f"{rot}; the fastest-growing mode of the linear dispersion relation "
                           f"sets the clump spacing and mass."),
               Block("li", f"Diffusion: {o.diffusion} ({_MODE_TEXT[o.diffusion]})."),
               Block("li", _profile_text(model)),
               Block("li", "Spacings: " + ("minimum-spanning-tree edges" if o.spacing == "mst"
                                           else "nearest-neighbour distances")
                     + " of the deprojected positions, compared with the fastest-growing wavelength."),
               Block("li", "Fragment mass: " + ("Sigma lambda_m^2 (one wavelength squared)"
                                                if o.fragment_shape == "square"
                                                else "Sigma pi (lambda_m / 2)^2 (circular patch)")
                     + f"; mean particle mass {o.mu_gas:g} m_H."),
               Block("li", "Likelihood: log-normal in each spacing and mass with intrinsic scatter "
                           "and the catalog's errors"
                     + ("" if o.use_spacings and o.use_masses else
                        f" (spacings {'used' if o.use_spacings else 'not used'}, masses "
                        f"{'used' if o.use_masses else 'not used'})")
                     + (f"; growth time below {o.growth_time_max:.3g} yr ({o.growth_constraint})"
                        if o.growth_time_max is not None else "") + "."),
               Block("li", f"Selection: {model.selection_text()}."),
               Block("li", "Measurements used as data (one likelihood term each): "
                     + ("; ".join(m.describe() for m in model.measurements) or "none") + ".")]
    blocks.append(Block("h2", "Priors"))
    from ..inference.priors import PARAMETERS

    order = [n for n in PARAMETERS if n in model.priors] + \
        [n for n in model.priors if n not in PARAMETERS]
    for name in sorted(order, key=lambda n: model.priors[n].fixed):
        prior = model.priors[name]
        blocks.append(Block("li", f"{name}: {prior.describe()}"
                                  + ("" if prior.fixed else " (sampled)")))
    blocks.append(Block("h2", "Geometry and dust conventions"))
    meta = region.meta
    geo = [f"{k.replace('_', ' ')} {_meta_text(meta[k])}" for k in
           ("distance", "inclination", "position_angle") if k in meta]
    blocks.append(Block("li", (", ".join(geo) + "; " if geo else "")
                        + "positions (x east, y north) are deprojected onto the plane of the sheet with the "
                          "inclination (0 = face-on) and the position angle of the major axis "
                          "(east of north)."))
    if region.mass_from_flux:
        dust = [f"{k.replace('_', ' ')} {_meta_text(meta[k])}" for k in
                ("wavelength", "dust_temperature", "dust_temperature_err", "dust_opacity_observed",
                 "gas_to_dust")
                if k in meta]
        blocks.append(Block("li", "Masses from continuum fluxes, M = g F_nu d^2 / (kappa_nu "
                                  "B_nu(T_dust)) with the full Planck function: "
                            + ", ".join(dust) + "."))
    else:
        blocks.append(Block("li", "Masses as given in the catalog (no dust conversion)."))
    blocks.append(Block("h2", "Catalog"))
    sp = region.spacings.to_value("au")
    m = region.masses.to_value("jupiterMass")
    blocks += [Block("li", f"{region.source}, region {region.name}: {len(region.ids)} clumps."),
               Block("li", f"{sp.size} spacings: median {np.median(sp):.3g} au, range "
                           f"{sp.min():.3g}-{sp.max():.3g} au."),
               Block("li", f"masses: median {np.median(m):.3g} M_Jup, range {m.min():.3g}-"
                           f"{m.max():.3g} M_Jup.")]
    for w in region.warnings:
        blocks.append(Block("li", f"catalog warning: {w}"))
    for x in region.excluded:
        blocks.append(Block("li", f"excluded: {x}"))
    blocks.append(Block("h2", "Fit"))
    conv = {True: "converged", False: "NOT converged"}.get(diag.get("converged"), "convergence unknown")
    blocks.append(Block("li", f"{diag.get('steps', '?')} steps x {diag.get('walkers', '?')} walkers, "
                              f"{conv}"
                              f"; acceptance {_g(diag.get('acceptance_fraction', np.nan), 2)}; "
                              f"{post.n} posterior samples after discarding {post.burn} steps and "
                              f"thinning by {post.thin}."))
    return blocks


def table_block(table, ratios) -> Block:
    """The posterior summary (fixed parameters left out) with each width ratio, as a table."""
    header = ["quantity", "unit", "median", "68% interval", "95% interval", "width/prior"]
    rows = []
    for r in table:
        if r["kind"] == "fixed":
            continue
        rat = ratios.get(str(r["name"]))
        rows.append([str(r["name"]), str(r["unit"]) or "-", _g(r["median"]),
                     f"{_g(r['p16'])} - {_g(r['p84'])}", f"{_g(r['p02_5'])} - {_g(r['p97_5'])}",
                     _g(rat, 2) if rat is not None else "-"])
    return Block("table", data=(header, rows))
