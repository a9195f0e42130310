"""Lumped seated-human models for vertical whole-body vibration.

Each model is data: rigid segments (masses), spring-damper couplings between
them or to the seat surface, the mass that moves with the seat surface
without vibrating (legs, part of the thighs), and which segment, if any,
is the head. Responses are computed from the model's mass, damping and
stiffness matrices under a prescribed vertical motion of a rigid seat
surface (base excitation), vectorised over frequency:

- ``apparent_mass(model, f)``: vertical force on the seat surface divided
  by its vertical acceleration, kg (complex);
- ``seat_to_head_transmissibility(model, f)``: head over seat-surface
  vertical acceleration (complex, dimensionless);
- ``resonance(model)``: frequency (Hz) and magnitude of the apparent-mass
  peak.

Equations. With absolute segment displacements ``x`` and seat-surface
displacement ``u``, ``M x'' + C x' + K x = (k_s + c_s d/dt) u`` where
``k_s``, ``c_s`` collect the couplings to the seat. At angular frequency w
the segment transmissibilities are ``T = (K - w^2 M + i w C)^-1 (k_s + i w
c_s)``. The only external force on the person is the seat force, so it equals
the sum of the segments' inertia forces: the apparent mass is
``m_seat + sum_j m_j T_j``. At 0 Hz every T_j is 1 and the apparent mass is
the total mass the seat carries.

Scaling to an occupant. :func:`scaled` multiplies every mass, stiffness and
damping by the same factor ``s = body_mass / model.reference_body_mass``.
That keeps every natural frequency (sqrt(k/m)) and damping ratio
(c / 2 sqrt(k m)), hence the normalised apparent mass (apparent mass over
its static value) and the transmissibilities, and makes the static seat load
proportional to body mass. Where a publication gives no subject mass, the
reference body mass is the model's seated mass divided by
:data:`SEATED_FRACTION`.

Provenance. The parameter values below are recalled from the cited papers
and from later reviews that tabulate them; they could not be checked
against the papers while writing this module, and each model says so in its
``provenance``. The segment heights are a layout for placing and drawing the
bodies only; they are not from the publications and do not enter any
vertical response.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

__all__ = [
    "Segment", "Coupling", "ReportedPeak", "OccupantModel", "OCCUPANT_MODELS",
    "SEATED_FRACTION", "SEAT", "scaled", "occupant_matrices", "segment_transmissibility",
    "apparent_mass", "normalised_apparent_mass", "seat_to_head_transmissibility",
    "resonance", "natural_frequencies",
]

#: Name of the seat surface (the moving base) in a model's couplings.
SEAT = "seat"

#: Share of body mass carried by the seat pan of a person sitting upright with
#: the feet on the floor (common practice, no source). Used only to give a
#: reference body mass to models whose publication states none here.
SEATED_FRACTION = 0.75


@dataclass(frozen=True)
class Segment:
    """One rigid lumped mass of the body.

    ``mass`` in kg; ``height`` the nominal height of its centre above the seat
    surface, m (layout only).
    """

    name: str
    mass: float
    height: float


@dataclass(frozen=True)
class Coupling:
    """A vertical spring and viscous damper between ``lower`` and ``upper``.

    ``lower`` is a segment name or :data:`SEAT`; stiffness N/m, damping N s/m.
    """

    lower: str
    upper: str
    stiffness: float
    damping: float


@dataclass(frozen=True)
class ReportedPeak:
    """What the publication reports about the measured apparent-mass peak.

    Ranges, because the values are recalled (``note`` says so): ``frequency_hz``
    (low, high) in Hz and ``normalised_magnitude`` (low, high), the peak
    apparent mass over the static (0 Hz) apparent mass.
    """

    frequency_hz: tuple[float, float]
    normalised_magnitude: tuple[float, float]
    note: str


@dataclass(frozen=True)
class OccupantModel:
    """A published lumped model of a seated person in vertical vibration.

    ``segments`` run from the seat upwards; ``couplings`` join them to each
    other and to the seat (``lower == "seat"``). ``seat_mass`` (kg) is the
    part of the body that moves with the seat surface without vibrating.
    ``head`` names the head segment, or is None where the model has none.
    ``reference_body_mass`` (kg) is the body mass of the person the values
    represent (the basis of :func:`scaled`).
    """

    key: str
    title: str
    citation: str
    segments: tuple[Segment, ...]
    couplings: tuple[Coupling, ...]
    seat_mass: float
    head: str | None
    reference_body_mass: float
    provenance: str
    reported: ReportedPeak | None = None
    scale: float = field(default=1.0)

    @property
    def moving_mass(self) -> float:
        """Sum of the vibrating segment masses, kg."""
        return float(sum(s.mass for s in self.segments))

    @property
    def seated_mass(self) -> float:
        """Total mass the seat carries (static apparent mass), kg."""
        return self.moving_mass + float(self.seat_mass)

    @property
    def body_mass(self) -> float:
        """Body mass of the person this (possibly scaled) model represents, kg."""
        return self.reference_body_mass * self.scale

    @property
    def segment_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.segments)

    def topology(self) -> tuple[str, ...]:
        """The couplings as ``"lower -> upper"`` strings, seat first."""
        return tuple(f"{c.lower} -> {c.upper}" for c in self.couplings)

    def to_dict(self) -> dict:
        """Plain-data form (SI units) for JSON and tables."""
        return {
            "key": self.key, "title": self.title, "citation": self.citation,
            "body_mass_kg": self.body_mass, "seated_mass_kg": self.seated_mass,
            "seat_mass_kg": self.seat_mass, "head": self.head,
            "segments": [{"name": s.name, "mass_kg": s.mass} for s in self.segments],
            "couplings": [{"lower": c.lower, "upper": c.upper, "stiffness_N_per_m": c.stiffness,
                           "damping_N_s_per_m": c.damping} for c in self.couplings],
            "provenance": self.provenance,
        }


def _check(model: OccupantModel) -> OccupantModel:
    names = model.segment_names
    if len(set(names)) != len(names) or SEAT in names:
        raise ValueError(f"{model.key}: segment names must be unique and not {SEAT!r}")
    for c in model.couplings:
        if c.upper not in names or (c.lower not in names and c.lower != SEAT):
            raise ValueError(f"{model.key}: coupling {c.lower} -> {c.upper} names no segment")
    if model.head is not None and model.head not in names:
        raise ValueError(f"{model.key}: head {model.head!r} is not a segment")
    if not any(c.lower == SEAT for c in model.couplings):
        raise ValueError(f"{model.key}: no coupling to the seat")
    return model


def scaled(model: OccupantModel, body_mass: float) -> OccupantModel:
    """The model scaled to a person of ``body_mass`` kg.

    Masses, stiffnesses and dampings are all multiplied by
    ``body_mass / model.body_mass``, which keeps natural frequencies, damping
    ratios and the normalised apparent mass unchanged.
    """
    if not np.isfinite(body_mass) or body_mass <= 0:
        raise ValueError(f"body mass must be positive, got {body_mass}")
    s = float(body_mass) / model.body_mass
    return replace(
        model,
        segments=tuple(replace(g, mass=g.mass * s) for g in model.segments),
        couplings=tuple(replace(c, stiffness=c.stiffness * s, damping=c.damping * s)
                        for c in model.couplings),
        seat_mass=model.seat_mass * s,
        scale=model.scale * s,
    )


def occupant_matrices(model: OccupantModel):
    """Dense ``(M, C, K, k_seat, c_seat)`` of the segments (SI).

    ``k_seat`` and ``c_seat`` (length n) are the force on each segment per unit
    seat-surface displacement and velocity.
    """
    index = {name: i for i, name in enumerate(model.segment_names)}
    n = len(index)
    M = np.diag([s.mass for s in model.segments]).astype(float)
    K = np.zeros((n, n))
    C = np.zeros((n, n))
    k_seat = np.zeros(n)
    c_seat = np.zeros(n)
    for c in model.couplings:
        j = index[c.upper]
        K[j, j] += c.stiffness
        C[j, j] += c.damping
        if c.lower == SEAT:
            k_seat[j] += c.stiffness
            c_seat[j] += c.damping
        else:
            i = index[c.lower]
            K[i, i] += c.stiffness
            C[i, i] += c.damping
            K[i, j] -= c.stiffness
            K[j, i] -= c.stiffness
            C[i, j] -= c.damping
            C[j, i] -= c.damping
    return M, C, K, k_seat, c_seat


def segment_transmissibility(model: OccupantModel, frequency_hz) -> np.ndarray:
    """Complex segment-over-seat motion ratios, shape (n_frequencies, n_segments).

    ``frequency_hz`` in Hz (scalar or array).
    """
    f = np.atleast_1d(np.asarray(frequency_hz, dtype=float))
    M, C, K, k_seat, c_seat = occupant_matrices(model)
    w = 2.0 * np.pi * f
    dynamic = K[None] - (w**2)[:, None, None] * M[None] + 1j * w[:, None, None] * C[None]
    rhs = k_seat[None] + 1j * w[:, None] * c_seat[None]
    return np.linalg.solve(dynamic, rhs[..., None])[..., 0]


def apparent_mass(model: OccupantModel, frequency_hz) -> np.ndarray:
    """Apparent mass (seat force / seat acceleration), kg, complex, one per frequency (Hz)."""
    T = segment_transmissibility(model, frequency_hz)
    masses = np.array([s.mass for s in model.segments])
    return model.seat_mass + T @ masses


def normalised_apparent_mass(model: OccupantModel, frequency_hz) -> np.ndarray:
    """Apparent mass divided by the seated (static) mass, complex, dimensionless."""
    return apparent_mass(model, frequency_hz) / model.seated_mass


def seat_to_head_transmissibility(model: OccupantModel, frequency_hz) -> np.ndarray:
    """Head over seat-surface vertical acceleration, complex, dimensionless.

    Raises ValueError for a model without a head segment.
    """
    if model.head is None:
        raise ValueError(f"occupant model {model.key!r} has no head segment")
    T = segment_transmissibility(model, frequency_hz)
    return T[:, model.segment_names.index(model.head)]


def resonance(model: OccupantModel, response: str = "apparent_mass",
              band_hz: tuple[float, float] = (0.5, 20.0)) -> tuple[float, float]:
    """``(frequency_hz, peak magnitude)`` of the largest peak of a response in a band.

    ``response`` is ``"apparent_mass"`` (magnitude in kg) or ``"head"``
    (seat-to-head transmissibility, dimensionless). The peak is located on a
    0.01 Hz grid and refined by a bounded scalar search.
    """
    funcs = {"apparent_mass": apparent_mass, "head": seat_to_head_transmissibility}
    if response not in funcs:
        raise ValueError(f"response must be one of {sorted(funcs)}, got {response!r}")
    func = funcs[response]
    lo, hi = band_hz
    grid = np.arange(lo, hi + 1e-9, 0.01)
    mag = np.abs(func(model, grid))
    i = int(np.argmax(mag))
    a, b = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    if b <= a:
        return float(grid[i]), float(mag[i])
    from scipy.optimize import minimize_scalar  # here: plugin discovery runs on every command

    best = minimize_scalar(lambda x: -abs(func(model, x)[0]), bounds=(a, b), method="bounded",
                           options={"xatol": 1e-6})
    if -best.fun >= mag[i]:
        return float(best.x), float(-best.fun)
    return float(grid[i]), float(mag[i])


def natural_frequencies(model: OccupantModel) -> np.ndarray:
    """Undamped natural frequencies (Hz) of the segments on a fixed seat, ascending."""
    from scipy.linalg import eigh

    M, _, K, _, _ = occupant_matrices(model)
    lam = eigh(K, M, eigvals_only=True)
    return np.sqrt(np.clip(lam, 0.0, None)) / (2.0 * np.pi)


_FAIRLEY_GRIFFIN = OccupantModel(
    key="fairley_griffin_1989",
    title="One-DOF model with a non-vibrating mass (Fairley and Griffin 1989)",
    citation=("Fairley, T.E. and Griffin, M.J. (1989). The apparent mass of the seated "
              "human body: vertical vibration. Journal of Biomechanics 22(2), 81-94."),
    segments=(Segment("body", 45.0, 0.30),),
    couplings=(Coupling(SEAT, "body", 44130.0, 1485.0),),
    seat_mass=6.0,
    head=None,
    reference_body_mass=(45.0 + 6.0) / SEATED_FRACTION,
    provenance=("Values from memory (m1 = 6 kg on the seat, m2 = 45 kg, k = 44.13 kN/m, "
                "c = 1.485 kN s/m); not checked against the paper."),
    reported=ReportedPeak(
        frequency_hz=(4.0, 5.5), normalised_magnitude=(1.2, 1.7),
        note=("Fairley and Griffin 1989 (from memory): mean apparent-mass resonance near "
              "5 Hz, falling towards 4 Hz as the vibration magnitude rises; normalised "
              "peak about 1.4-1.5.")),
)

_WEI_GRIFFIN = OccupantModel(
    key="wei_griffin_1998",
    title="Two-DOF model, two branches on the seat (Wei and Griffin 1998)",
    citation=("Wei, L. and Griffin, M.J. (1998). Mathematical models for the apparent mass "
              "of the seated human body exposed to vertical vibration. Journal of Sound "
              "and Vibration 212(5), 855-874."),
    segments=(Segment("upper_body", 33.4, 0.35), Segment("lower_body", 10.7, 0.12)),
    couplings=(Coupling(SEAT, "upper_body", 35776.0, 761.0),
               Coupling(SEAT, "lower_body", 38374.0, 458.0)),
    seat_mass=6.0,
    head=None,
    reference_body_mass=(33.4 + 10.7 + 6.0) / SEATED_FRACTION,
    provenance=("Values and the parallel (two branches on the seat) topology from memory "
                "(m1 = 6.0 kg, m2 = 33.4 kg, m3 = 10.7 kg, k2 = 35.776 kN/m, "
                "k3 = 38.374 kN/m, c2 = 761 N s/m, c3 = 458 N s/m); not checked. "
                "The segment names are ours."),
    reported=ReportedPeak(
        frequency_hz=(4.0, 5.5), normalised_magnitude=(1.3, 1.7),
        note=("Wei and Griffin 1998 (from memory): principal resonance of the mean "
              "normalised apparent mass near 5 Hz with a magnitude near 1.5, and a "
              "second, smaller feature near 8-10 Hz.")),
)

_BOILEAU_RAKHEJA = OccupantModel(
    key="boileau_rakheja_1998",
    title="Four-DOF chain model of the seated driver (Boileau and Rakheja 1998)",
    citation=("Boileau, P.-E. and Rakheja, S. (1998). Whole-body vertical biodynamic "
              "response characteristics of the seated vehicle driver: measurement and "
              "model development. International Journal of Industrial Ergonomics 22, "
              "449-472."),
    segments=(Segment("thighs_pelvis", 12.78, 0.08), Segment("lower_torso", 8.62, 0.22),
              Segment("upper_torso", 28.49, 0.42), Segment("head", 5.31, 0.75)),
    couplings=(Coupling(SEAT, "thighs_pelvis", 90000.0, 2064.0),
               Coupling("thighs_pelvis", "lower_torso", 162800.0, 4585.0),
               Coupling("lower_torso", "upper_torso", 183000.0, 4750.0),
               Coupling("upper_torso", "head", 310000.0, 400.0)),
    seat_mass=0.0,
    head="head",
    reference_body_mass=(12.78 + 8.62 + 28.49 + 5.31) / SEATED_FRACTION,
    provenance=("Values from memory (head 5.31 kg, upper torso 28.49 kg, lower torso "
                "8.62 kg, thighs and pelvis 12.78 kg; k = 310, 183, 162.8, 90 kN/m and "
                "c = 400, 4750, 4585, 2064 N s/m from head to seat); not checked."),
    reported=ReportedPeak(
        frequency_hz=(4.0, 5.5), normalised_magnitude=(1.3, 1.8),
        note=("Boileau and Rakheja 1998 (from memory): the target apparent mass and "
              "seat-to-head transmissibility of drivers peak between 4 and 5 Hz.")),
)

#: The built-in occupant models, by key.
OCCUPANT_MODELS: dict[str, OccupantModel] = {
    m.key: _check(m) for m in (_FAIRLEY_GRIFFIN, _WEI_GRIFFIN, _BOILEAU_RAKHEJA)
}
