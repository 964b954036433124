"""The size stage's result: H, radius, mass, momentum bound, active fraction, assumptions."""

from dataclasses import asdict, dataclass, field

__all__ = ["SizeResult", "SIZE_STATUSES"]

#: Values of ``SizeResult.status`` and their meaning.
SIZE_STATUSES = {
    "radius": "a radius with every assumption inside its interval",
    "uncertain": "a radius whose H error exceeds the stated limit (flag h_error_large)",
    "upper_limit": "too few frames detect the nucleus: an upper limit on the radius only",
}


@dataclass(frozen=True)
class SizeResult:
    """Nucleus size, mass and activity under stated assumptions.

    Every number here rests on the assumed albedo and bulk density; ``assumptions`` says which
    values were assumed, and `summary` prints them with the results. Quantities are plain
    floats in the units their names carry (``_km``, ``_kg``, ``_g_cm3``, ``_mag``, ...); values
    that could not be formed (no mass-loss rate given, say) are None.

    ``status`` is a key of `SIZE_STATUSES` and ``reason`` says why it is not ``"radius"``.
    For ``"upper_limit"`` the radius fields are None and ``radius_upper_limit_km`` holds the
    limit. ``H_err_total_mag`` is the H error with the phase coefficient's range (or fit)
    inside it, the one compared with ``H_err_limit_mag``.
    """

    H_mag: float
    H_err_mag: float
    band: str
    m_sun_mag: float
    n_points: int
    H_method: str
    albedo: float
    albedo_lo: float
    albedo_hi: float
    albedo_prior: str
    radius_km: float
    radius_lo_km: float
    radius_hi_km: float
    radius_at_albedo_km: float
    interval: float
    n_samples: int
    density_lo_g_cm3: float
    density_hi_g_cm3: float
    mass_kg_lo: float
    mass_kg_hi: float
    mass_loss_kg_s: float | None = None
    outflow_speed_m_s: float | None = None
    accel_limit_m_s2: float | None = None
    momentum_efficiency: float | None = None
    mass_bound_kg: float | None = None
    radius_bound_km: float | None = None
    radius_bound_at_density_lo_km: float | None = None
    density_min_g_cm3: float | None = None
    albedo_max: float | None = None
    bound_consistent: bool | None = None
    bound_statement: str | None = None
    active_fraction: float | None = None
    active_area_km2: float | None = None
    activity_r_h_au: float | None = None
    sublimation_geometry: str | None = None
    composition: dict | None = field(default=None, compare=False)
    assumptions: tuple = ()
    flags: tuple = ()
    status: str = "radius"
    reason: str = ""
    radius_upper_limit_km: float | None = None
    H_median_mag: float | None = None
    H_err_total_mag: float | None = None
    H_err_limit_mag: float | None = None
    phase_coefficient: dict | None = field(default=None, compare=False)

    def to_dict(self):
        """Return every field as JSON-ready values (tuples become lists)."""
        out = asdict(self)
        out["assumptions"] = list(self.assumptions)
        out["flags"] = list(self.flags)
        return out

    def summary(self):
        """Return a readable multi-line summary that states every assumption."""
        if self.status == "upper_limit":
            return self._limit_summary()
        pct = round(100 * self.interval)
        lines = [
            "Nucleus size and mass (the sizes rest on the assumed albedo and density)",
            f"  H ({self.band}, rotation-averaged, {self.H_method}, {self.n_points} points) = "
            f"{self.H_mag:.3f} +- {self.H_err_mag:.3f} mag"
            + (f" (+- {self.H_err_total_mag:.3f} with the phase coefficient's range)"
               if self.H_err_total_mag is not None else ""),
            f"  effective radius {self.radius_km:.3g} km, {pct}% interval "
            f"{self.radius_lo_km:.3g}-{self.radius_hi_km:.3g} km "
            f"(diameter {2 * self.radius_km:.3g} km)",
            f"  radius at albedo {self.albedo:g} and the nominal H: "
            f"{self.radius_at_albedo_km:.3g} km",
            f"  mass {self.mass_kg_lo:.3g} - {self.mass_kg_hi:.3g} kg "
            f"(density {self.density_lo_g_cm3:g}-{self.density_hi_g_cm3:g} g/cm^3)",
        ]
        if self.mass_bound_kg is not None:
            lines += [
                f"  momentum bound: M >= {self.mass_bound_kg:.3g} kg, so R >= "
                f"{self.radius_bound_km:.3g} km at {self.density_hi_g_cm3:g} g/cm^3 "
                f"({self.radius_bound_at_density_lo_km:.3g} km at {self.density_lo_g_cm3:g})",
                f"  {self.bound_statement}",
            ]
        else:
            lines.append("  momentum bound: not formed (mass-loss rate, outflow speed or "
                         "acceleration limit not given)")
        if self.active_fraction is not None:
            lines.append(
                f"  active fraction {self.active_fraction:.3g} of the surface "
                f"({self.active_area_km2:.3g} km^2 at r_h = {self.activity_r_h_au:.3g} AU, "
                f"{self.sublimation_geometry} balance)")
        else:
            lines.append("  active fraction: not formed (no mass-loss rate given)")
        if self.status != "radius":
            lines.insert(1, f"  RADIUS {self.status.upper()}: {self.reason}")
        return self._close(lines)

    def _limit_summary(self):
        lines = [
            "Nucleus size: UPPER LIMIT only (the sizes rest on the assumed albedo)",
            f"  {self.reason}",
            f"  H ({self.band}) fainter than {self.H_mag:.3f} mag; effective radius below "
            f"{self.radius_upper_limit_km:.3g} km at albedo {self.albedo_lo:g}",
        ]
        return self._close(lines)

    def _close(self, lines):
        if self.flags:
            lines.append(f"  flags: {', '.join(self.flags)}")
        lines.append("Assumptions:")
        lines += [f"  - {a}" for a in self.assumptions]
        return "\n".join(lines)
