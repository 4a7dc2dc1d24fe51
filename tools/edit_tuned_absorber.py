"""Rewrite cells of templates/tuned_absorber.ipynb to the traceability rule (re-runnable).

Every numbered result is a formula step (``sheet.calc``) or carries its working; the
derived two-mass steady state gets an independent check against solve_ivp; prose maths
is written ``$...$``. Each edited cell is replaced whole and the script checks that the
cell it replaces is the one it expects (by a marker line), so running it twice gives the
same notebook.

    python tools/edit_tuned_absorber.py
"""

from __future__ import annotations

from pathlib import Path

import nbformat

NOTEBOOK = Path(__file__).resolve().parent.parent / "templates" / "tuned_absorber.ipynb"

INTRO = r"""# Tuned vibration absorber on a machine

A machine on a flexible support runs close to the support's natural frequency. A small
mass on a spring and a viscous damper (a tuned absorber) is added to it. The two-mass
model $M\ddot{x} + C\dot{x} + Kx = F(t)$ is solved by vector undetermined coefficients
for the steady state at running speed; the absorber is tuned for equal peaks,
$f = 1/(1+\mu)$ and $\zeta_n = \sqrt{3\mu / (8(1+\mu)^3)}$ against the machine's natural
frequency $\omega_n$ (the same damper as $\zeta_a = \sqrt{3\mu / (8(1+\mu))}$ against the
absorber's own), and the two peaks of the machine's amplitude curve, taken from the receptance
matrices, are checked to come out nearly equal. The derived steady state is checked against a
numerical integration of the same equations. The absorber's stroke and spring force at
running speed are checked against their limits, and the classical alternative for a
fixed-speed machine, the absorber tuned to running speed, is compared.

**How to use.** Edit the values in the cell tagged `parameters` and run all cells, or
build a sheet from an inputs file:

    calckit build tuned_absorber --inputs my_inputs.toml --out built/
"""

IMPORTS = r"""import matplotlib

matplotlib.use("Agg")  # figures go onto the sheet as SVG, not to a window
import matplotlib.pyplot as plt
import numpy as np
import sympy as sp

import calckit as ck
from calckit.sheet.working import conversion_formula  # a speed's step to rad/s, as the sheet makes it

# Set by `calckit build` in the cell tagged inputs-from-file; enters the sheet's fingerprint.
template_text = ""
inputs_file = "the template's own values"
input_sources = {}  # input name -> where its value comes from, when the inputs file says
"""

TUNING = r'''m1 = ck.exact(ck.to_si(m1_q, "machine_mass").magnitude, "machine_mass")
k1 = ck.exact(ck.to_si(k1_q, "support_stiffness").magnitude, "support_stiffness")
F0 = ck.exact(ck.to_si(F_q, "force_amplitude").magnitude, "force_amplitude")
w = ck.angular_frequency(speed_q, "running_speed", exact=True)
mu = ck.exact(ck.to_si(mu_q, "mass_ratio").magnitude, "mass_ratio")
wn = sp.sqrt(k1 / m1)
sym = sp.Symbol  # plain symbols: formulas stay as written
tuning_formulas = ck.physics.TUNING_FORMULAS  # the one place of the equal-peak formulas
den_hartog = "J. P. Den Hartog, Mechanical Vibrations, 4th ed., 1956, sec. 3.3 (equal-peak tuning)"

# the running speed in rad/s to six figures: near resonance k_1 - m_1 Omega^2 is a small difference of
# large numbers, and four figures of Omega would move it by several percent
# (the step the sheet would make on its own, at six figures; a later step given speed_q would clash with it)
to_rad_s = conversion_formula(speed_q)
if to_rad_s is None:  # given in rad/s already
    Omega_q = speed_q
else:
    sheet.calc("running_speed_rad_s", to_rad_s[0], to_rad_s[1], unit="rad/s", symbol=r"\Omega", sig=6,
               title="Running speed in rad/s (" + to_rad_s[2].replace("2 pi", "$2\\pi$") + ")")
    Omega_q = sheet.carried("running_speed_rad_s", 6)
sheet.calc("natural_frequency", sp.sqrt(sym("k_1") / sym("m_1")), {"k_1": k1_q, "m_1": m1_q}, unit="rad/s",
           title="Natural frequency of the machine on its support", symbol=r"\omega_n", sig=6)
sheet.calc("support_damping", 2 * sym("zeta_1") * sp.sqrt(sym("k_1") * sym("m_1")),
           {"zeta_1": zeta1_q, "k_1": k1_q, "m_1": m1_q}, unit="N*s/m", title="Damping coefficient of the support",
           symbol="c_1")
sheet.calc("absorber_mass", sym("mu") * sym("m_1"), {"mu": mu_q, "m_1": m1_q}, unit="kg", title="Absorber mass",
           symbol="m_2")
sheet.calc("frequency_ratio_opt", tuning_formulas["f"], {"mu": mu_q}, unit="",
           title=r"Equal-peak frequency ratio $f = \omega_a / \omega_n$, the absorber's own frequency over the machine's",
           symbol="f", reference=den_hartog, sig=6)
sheet.calc("absorber_frequency", tuning_formulas["omega_a"],
           {"f": sheet.carried("frequency_ratio_opt", 6), "omega_n": sheet.carried("natural_frequency", 6)}, unit="rad/s",
           title="Natural frequency of the absorber on its own spring", symbol=r"\omega_a", sig=6)
sheet.calc("damping_ratio_opt", tuning_formulas["zeta_n"], {"mu": mu_q}, unit="",
           title=r"Equal-peak absorber damping ratio against the machine's natural frequency, $\zeta_n = c_2 / (2 m_2 \omega_n)$",
           symbol=r"\zeta_n", reference=den_hartog, sig=5)
sheet.calc("damping_ratio_own", tuning_formulas["zeta_a"], {"mu": mu_q}, unit="",
           title=r"The same damper's ratio against the absorber's own frequency, $\zeta_a = c_2 / (2 m_2 \omega_a)$",
           symbol=r"\zeta_a", reference=den_hartog, sig=5)
sheet.calc("absorber_stiffness", tuning_formulas["k_2"],
           {"m_2": sheet.carried("absorber_mass"), "omega_a": sheet.carried("absorber_frequency", 6)}, unit="kN/mm",
           title="Absorber spring stiffness", symbol="k_2")
sheet.calc("absorber_damping", tuning_formulas["c_2"],
           {"zeta_n": sheet.carried("damping_ratio_opt", 5), "m_2": sheet.carried("absorber_mass"),
            "omega_n": sheet.carried("natural_frequency", 6)}, unit="N*s/m",
           title=r"Absorber damping coefficient (against $\omega_n$, as $\zeta_n$ is defined)", symbol="c_2",
           reference=den_hartog)

# the chain above, redone unrounded by the one function: the two must agree to the sheet's rounding
tuning = ck.equal_peak_tuning(float(mu), float(wn),
                              float(ck.to_si(sheet.carried("absorber_mass"), "absorber_mass").magnitude))
for name, value in (("absorber_stiffness", tuning.k2), ("absorber_damping", tuning.c2),
                    ("damping_ratio_opt", tuning.zeta_main), ("damping_ratio_own", tuning.zeta_own)):
    got = sheet.results[name]
    got = float(ck.to_si(got, name).magnitude) if hasattr(got, "units") else float(got)
    if abs(got / value - 1) > 2e-3:
        raise ck.InternalError(
            f"the sheet's {name} = {got!r} (SI) differs from calckit.equal_peak_tuning's {value!r}",
            reproduce=f"calckit build tuned_absorber --inputs {inputs_file!r}",
            where="tuned_absorber, tuning",
        )


def design(name):
    """A design value as the sheet shows it (four significant figures), SI, exact."""
    return ck.exact(float(ck.to_si(sheet.carried(name), name).magnitude))


m2, k2, c2, c1_design = (design(n) for n in ("absorber_mass", "absorber_stiffness", "absorber_damping", "support_damping"))
'''

MODEL = r"""M = [[m1, 0], [0, m2]]
C = [[c1_design + c2, -c2], [-c2, c2]]
K = [[k1 + k2, -k2], [-k2, k2]]
model = ck.MultiMass(M, C, K)
t = sp.Symbol("t", real=True)
forcing = [F0 * sp.cos(w * t), 0]
der = sheet.derivation(model.particular(forcing, t=t), "Steady state by vector undetermined coefficients")
reproduce = f"calckit build tuned_absorber --inputs {inputs_file!r}"

# the undamped natural frequencies: the roots of det(K - omega^2 M) = 0 of the two masses in closed form
# (the one place of the formulas), from the design values as shown
two_mass = ck.physics.FREQUENCY_FORMULAS
design_values = {"k_1": k1_q, "m_1": m1_q, "m_2": sheet.carried("absorber_mass"),
                 "k_2": sheet.carried("absorber_stiffness")}
sheet.calc("frequency_sum", two_mass["s"], design_values, unit="rad**2/s**2", sig=6, symbol="s",
           title=r"Sum of the roots, $\omega_1^2 + \omega_2^2$, of $m_1 m_2 \omega^4 - (m_1 k_2 + m_2 (k_1 + k_2)) \omega^2 + k_1 k_2 = 0$")
design_values["s"] = sheet.carried("frequency_sum", 6)
for i, which in ((1, "First"), (2, "Second")):
    sheet.calc(f"natural_frequency_{i}", two_mass[f"omega_{i}"], design_values, unit="rad/s", symbol=rf"\omega_{i}",
               title=f"{which} natural frequency with the absorber, undamped: a root of $\\det(K - \\omega^2 M) = 0$")
# the same frequencies as the model finds them (sympy's roots of det(K - omega^2 M), exact): they must agree
for i, value in enumerate(model.natural_frequencies, start=1):
    got = float(sheet.carried(f"natural_frequency_{i}").to("rad/s").magnitude)
    if abs(got / float(value) - 1) > 1e-3:
        raise ck.InternalError(
            f"the sheet's natural_frequency_{i} = {got!r} rad/s differs from MultiMass.natural_frequencies' "
            f"{float(value)!r}", reproduce=reproduce, where="tuned_absorber, natural frequencies",
        )

sheet.calc("amplitude_without", sym("F_0") / sp.sqrt((sym("k_1") - sym("m_1") * sym("Omega") ** 2) ** 2
                                                     + (sym("c_1") * sym("Omega")) ** 2),
           {"F_0": F_q, "k_1": k1_q, "m_1": m1_q, "c_1": sheet.carried("support_damping"), "Omega": Omega_q},
           unit="mm", title="Machine amplitude at running speed without the absorber", symbol="X_0")

# the independent check: the derived steady state of both masses, and solve_ivp of the same two equations
# started from the derived state at t = 0 (a wrong x_p would leave a transient there); 40 periods of the force
x_p = list(der.solution)
x_start = [float(x.subs(t, 0)) for x in x_p]
v_start = [float(sp.diff(x, t).subs(t, 0)) for x in x_p]
as_float = lambda rows: [[float(e) for e in row] for row in rows]  # noqa: E731
peak = ck.compare_peak(
    x_p, as_float(M), as_float(C), as_float(K), forcing, t, x0=x_start, v0=v_start,
    duration=40 * 2 * float(sp.pi / w), samples=20001, coordinate=0,
)
sheet.independent_check(
    "x_1", peak, symbol="x_1", unit="mm",
    title="the machine's steady state, derived and integrated",
)
"""

RESPONSE = r"""omegas = np.linspace(0.6 * float(wn), 1.4 * float(wn), 8001)
H = model.frequency_response(omegas)
curve = np.abs(H[:, 0, 0]) * float(F0)
inner = (curve[1:-1] > curve[:-2]) & (curve[1:-1] > curve[2:])
peaks = curve[1:-1][inner]
if len(peaks) != 2:
    raise ck.CalcError(
        f"the machine's amplitude curve has {len(peaks)} peak(s) between 0.6 and 1.4 times its natural frequency",
        where="mass_ratio",
        do="Check the mass ratio; the equal-peak tuning gives two peaks",
    )
peak_at = omegas[1:-1][inner]
sweep = (
    r"$F_0 |H_{11}(\omega)|$ with $H = (K - \omega^2 M + i \omega C)^{-1}$ of the design values as shown "
    "(numpy.linalg.inv in calckit's MultiMass.frequency_response) on "
    f"{len(omegas)} equally spaced frequencies from {omegas[0]:.4g} to {omegas[-1]:.4g} rad/s "
    rf"($0.6\,\omega_n$ to $1.4\,\omega_n$, step {omegas[1] - omegas[0]:.3g} rad/s)"
)
for name, which, symbol, at, value in (("peak_low", "Lower", "X_{p1}", peak_at[0], peaks[0]),
                                      ("peak_high", "Higher", "X_{p2}", peak_at[1], peaks[1])):
    sheet.result(name, ck.Q_(value * 1000, "mm"), symbol=symbol,
                 title=f"{which}-frequency peak of the machine amplitude (at {at:.4g} rad/s)",
                 working=("procedure", f"a local maximum of {sweep}"))
X_p1, X_p2 = sheet.carried("peak_low"), sheet.carried("peak_high")
difference = sheet.calc(
    "peak_difference", sp.Abs(sym("X_p1") - sym("X_p2")) / sp.Max(sym("X_p1"), sym("X_p2")),
    {"X_p1": X_p1, "X_p2": X_p2}, unit="percent", symbol=r"\Delta",
    title="Difference of the two peaks, in percent of the higher",
)

bare = float(F0) / np.abs(float(k1) - float(m1) * omegas**2 + 1j * omegas * float(c1_design))
fig, ax = plt.subplots(figsize=(6.0, 3.4))
ax.semilogy(omegas / float(wn), bare * 1000, color="0.6", lw=1.0, label="without absorber")
ax.semilogy(omegas / float(wn), curve * 1000, color="black", lw=1.2, label="with absorber (equal peaks)")
ax.axvline(float(w / wn), color="black", ls=":", lw=1.0, label="running speed")
ax.axhline(float(ck.to_si(limit, "amplitude_limit").magnitude) * 1000, color="black", ls="--", lw=0.8, label="limit")
ax.set_xlabel("frequency / natural frequency of the machine on its support")
ax.set_ylabel("machine amplitude, mm")
ax.legend(loc="upper right", fontsize=8)
sheet.figure(fig, f"Machine amplitude against frequency, mass ratio $\\mu$ = {float(mu):.3g}.")
plt.close(fig)
"""

AT_SPEED_TEXT = r"""## The machine and the absorber at running speed

The machine's amplitude $X_1$ and the absorber mass's motion relative to the machine, $x_r = x_2 - x_1$,
come from the two equations of motion at running speed (Cramer's rule on the dynamic stiffness, whose
determinant is $D = D_{re} + i D_{im}$); both are checked against the derivation above.
"""

AT_SPEED = r"""formulas = ck.physics.RESPONSE_FORMULAS  # the one place of the two-mass steady state
at_speed = {"k_1": k1_q, "m_1": m1_q, "c_1": sheet.carried("support_damping"), "m_2": sheet.carried("absorber_mass"),
            "k_2": sheet.carried("absorber_stiffness"), "c_2": sheet.carried("absorber_damping"), "Omega": Omega_q,
            "F_0": F_q}
# every term a stiffness at running speed in N/mm, so that the determinant's substitution prints on one line
sheet.calc("dyn_machine", formulas["p"], at_speed, unit="N/mm", title=r"$k_1 - m_1 \Omega^2$ at running speed", symbol="p")
sheet.calc("dyn_absorber", formulas["q"], at_speed, unit="N/mm", title=r"$k_2 - m_2 \Omega^2$ at running speed", symbol="q")
sheet.calc("damper_support", formulas["d_1"], at_speed, unit="N/mm", title="The support's damper at running speed",
           symbol="d_1")
sheet.calc("damper_absorber", formulas["d_2"], at_speed, unit="N/mm", title="The absorber's damper at running speed",
           symbol="d_2")
sheet.calc("inertia_absorber", formulas["h_2"], at_speed, unit="N/mm",
           title="The absorber mass's inertia at running speed", symbol="h_2")
at_speed.update(p=sheet.carried("dyn_machine"), q=sheet.carried("dyn_absorber"), d_1=sheet.carried("damper_support"),
                d_2=sheet.carried("damper_absorber"), h_2=sheet.carried("inertia_absorber"))
sheet.calc("det_re", formulas["D_re"], at_speed, unit="N**2/mm**2", title="Real part of the determinant",
           symbol="D_{re}")
sheet.calc("det_im", formulas["D_im"], at_speed, unit="N**2/mm**2", title="Imaginary part of the determinant",
           symbol="D_{im}")
at_speed.update(D_re=sheet.carried("det_re"), D_im=sheet.carried("det_im"))
amplitude = sheet.calc("amplitude", formulas["X_1"], at_speed, unit="mm", symbol="X_1",
                       title="Machine amplitude at running speed with the absorber")
stroke = sheet.calc("relative_stroke", formulas["X_r"], at_speed, unit="mm",
                    title="Stroke of the absorber mass relative to the machine at running speed", symbol="X_r")
at_speed.update(X_r=sheet.carried("relative_stroke"))
spring_force = sheet.calc("spring_force", formulas["F_s"], at_speed, unit="kN",
                          title="Force amplitude in the absorber spring at running speed", symbol="F_s")
sheet.calc("absorber_force", formulas["F_a"], at_speed, unit="kN",
           title="Force amplitude through the absorber, spring and damper together", symbol="F_a")

# the two amplitudes of the derivation (x_1 and x_2 - x_1 as A cos + B sin): the steps must agree to the rounding
x1, x2 = der.solution[0], der.solution[1]
for name, x, got in (("amplitude", x1, amplitude), ("relative_stroke", x2 - x1, stroke)):
    derived = float(sp.sqrt(x.coeff(sp.cos(w * t)) ** 2 + x.coeff(sp.sin(w * t)) ** 2))
    if abs(float(got.to("m").magnitude) / derived - 1) > 5e-3:
        raise ck.InternalError(
            f"the sheet's {name} ({float(got.to('m').magnitude)!r} m) differs from the derivation's {derived!r} m",
            reproduce=reproduce, where=f"tuned_absorber, {name}",
        )
"""

MODES = r"""reference_to = ck.DEFAULT_SEPARATION_REFERENCE  # the separation is measured relative to this (criteria)
separation_formula = ck.separation_formula(reference_to)  # in Omega and omega_n
for i, name in ((1, "natural_frequency_1"), (2, "natural_frequency_2")):
    sheet.calc(f"separation_{i}", separation_formula, {"Omega": Omega_q, "omega_n": sheet.carried(name)},
               unit="percent", title=f"Distance of running speed from mode {i}, relative to the {reference_to}",
               symbol=f"s_{i}")
sep1, sep2 = (ck.fmt(sheet.carried(f"separation_{i}")) for i in (1, 2))  # as the steps show them
sheet.note(
    f"The $\\pm${ck.SEPARATION_BAND * 100:.0f} % separation rule is waived for the two coupled modes: "
    f"$\\omega_1$ = {sheet.carried('natural_frequency_1').to('rad/s').magnitude:g} rad/s is {sep1} and "
    f"$\\omega_2$ = {sheet.carried('natural_frequency_2').to('rad/s').magnitude:g} rad/s is {sep2} from running speed "
    f"(relative to the {reference_to}). They are the modes the absorber makes on purpose around the running speed; "
    "its damper bounds them, and the checks on the highest peak of the machine's amplitude curve and on the "
    "amplitude at running speed take the place of the separation rule for them."
)
"""

ALTERNATIVE_TEXT = r"""## The alternative for a fixed-speed machine: the absorber tuned to running speed

An undamped absorber whose own frequency equals running speed, $k_2 = m_2 \Omega^2$, holds the
machine still at that speed ($q = 0$, so $X_1 = 0$), its spring carrying the whole force:
$X_r = F_0 / k_2$ (Den Hartog, sec. 3.2). It leaves two sharp undamped modes
close to running speed.
"""

ALTERNATIVE = r"""sheet.calc("absorber_stiffness_at_speed", sym("m_2") * sym("Omega") ** 2,
           {"m_2": sheet.carried("absorber_mass"), "Omega": Omega_q}, unit="kN/mm",
           title="Absorber stiffness tuned to running speed", symbol=r"k_{2,\Omega}")
sheet.calc("relative_stroke_at_speed", sym("F_0") / sym("k_2"),
           {"F_0": F_q, "k_2": sheet.carried("absorber_stiffness_at_speed")}, unit="mm",
           title="Stroke of the absorber tuned to running speed", symbol=r"X_{r,\Omega}")
sheet.calc("spring_force_at_speed", sym("k_2") * sym("X_r"),
           {"k_2": sheet.carried("absorber_stiffness_at_speed"), "X_r": sheet.carried("relative_stroke_at_speed")},
           unit="kN", title="Spring force of the absorber tuned to running speed", symbol=r"F_{s,\Omega}")
undamped = {"k_1": k1_q, "m_1": m1_q, "m_2": sheet.carried("absorber_mass"),
            "k_2": sheet.carried("absorber_stiffness_at_speed")}
sheet.calc("s_at_speed", two_mass["s"], undamped, unit="rad**2/s**2", sig=6, symbol=r"s_{\Omega}",
           title=r"$(k_1 + k_2)/m_1 + k_2/m_2$ with the absorber tuned to running speed")
undamped["s"] = sheet.carried("s_at_speed", 6)
for i in (1, 2):
    sheet.calc(f"natural_frequency_{i}_at_speed", two_mass[f"omega_{i}"], undamped, unit="rad/s",
               title=f"Mode {i} with the absorber tuned to running speed (undamped)", symbol=rf"\omega_{{{i},\Omega}}")
    sheet.calc(f"separation_{i}_at_speed", separation_formula,
               {"Omega": Omega_q, "omega_n": sheet.carried(f"natural_frequency_{i}_at_speed")}, unit="percent",
               title=f"Distance of running speed from mode {i}, tuned to running speed", symbol=rf"s_{{{i},\Omega}}")
r = sheet.carried
sheet.table(
    ["", "equal peaks", "tuned to running speed"],
    [
        ["absorber stiffness $k_2$", r("absorber_stiffness"), r("absorber_stiffness_at_speed")],
        ["absorber damping $c_2$", r("absorber_damping"), "none ($c_2 = 0$)"],
        ["machine amplitude at running speed $X_1$", r("amplitude"), "0 ($q = 0$)"],
        ["absorber stroke $X_r$", r("relative_stroke"), r("relative_stroke_at_speed")],
        ["spring force $F_s$", r("spring_force"), r("spring_force_at_speed")],
        [r"mode 1, $\omega_1$", r("natural_frequency_1"), r("natural_frequency_1_at_speed")],
        [r"mode 2, $\omega_2$", r("natural_frequency_2"), r("natural_frequency_2_at_speed")],
        ["running speed from mode 1", r("separation_1"), r("separation_1_at_speed")],
        ["running speed from mode 2", r("separation_2"), r("separation_2_at_speed")],
    ],
    "Equal-peak tuning against tuning to running speed (values from the steps above).",
)
sheet.note(
    "Tuned to running speed, the machine stands still at exactly that speed, but the two modes are undamped: "
    "a change of speed or of $k_2$ by a few percent, or the run-up through the lower mode, meets a sharp resonance. "
    "Equal-peak tuning keeps the machine's amplitude bounded at every speed; this sheet adopts it."
)
"""

CHECKS = r"""sheet.check(
    "equal peaks",
    float(difference.to("percent").magnitude),
    float(ck.to_si(peak_limit, "peak_difference_limit").magnitude),
    relation="<=",
    basis="Den Hartog, Mechanical Vibrations, 4th ed., sec. 3.3: equal-peak tuning",
    unit="percent",
)
sheet.check("amplitude at running speed", sheet.carried("amplitude"), limit, relation="<=", basis=amplitude_limit_basis, unit="mm")
sheet.check("highest peak", max(X_p1, X_p2), limit, relation="<=", basis=amplitude_limit_basis, unit="mm")
sheet.check("absorber stroke", sheet.carried("relative_stroke"), stroke_lim, relation="<=", basis=stroke_limit_basis, unit="mm")
sheet.check("absorber spring force", sheet.carried("spring_force"), spring_lim, relation="<=", basis=spring_force_limit_basis, unit="kN");
"""

CLOSING = r"""sheet.assume("The machine moves in one direction as one mass on its support; the absorber moves in the same direction.")
sheet.assume("Springs are linear and damping is viscous; the support's damping acts between the machine and the ground.")
sheet.assume("Absorber mass, stiffness and damping are set to four significant figures of the equal-peak values.")
sheet.assume(r"Equal-peak tuning assumes an undamped machine support (here the support has a damping ratio $\zeta_1$ = "
             f"{float(zeta1_q.to('').magnitude):g}, which lowers both peaks and leaves them a few percent unequal) and a "
             "force amplitude independent of speed (an unbalance force grows with the square of the speed; $F_0$ is "
             "taken at running speed for every frequency of the curve).")
sheet.assume(r"The absorber damping ratio is quoted against the machine's natural frequency, $\zeta_n = c_2 / (2 m_2 "
             r"\omega_n)$; against the absorber's own frequency the same damper has $\zeta_a = \zeta_n (1 + \mu)$.")
sheet.reference("J. P. Den Hartog, Mechanical Vibrations, 4th ed., McGraw-Hill, 1956 (Dover reprint, 1985), sec. 3.2 "
                "(the undamped dynamic absorber) and sec. 3.3 (the damped vibration absorber, equal-peak tuning).")
sheet.note("The sections of the book were recalled when this template was written, not read from the book beside it; "
           "a checker should confirm them in the edition named.")
sheet"""

# cell index -> (a line the cell being replaced holds, its new source)
EDITS = {
    0: ("# Tuned vibration absorber on a machine", INTRO),
    1: ("import calckit as ck", IMPORTS),
    6: ('ck.to_si(m1_q, "machine_mass")', TUNING),
    8: ("M = [[m1, 0], [0, m2]]", MODEL),
    9: ("## Frequency response of the machine", "## Frequency response of the machine"),
    10: ("omegas = np.linspace(", RESPONSE),
    11: ("at running speed", AT_SPEED_TEXT),
    12: ("formulas = ck.physics.RESPONSE_FORMULAS", AT_SPEED),
    14: ("reference_to = ck.DEFAULT_SEPARATION_REFERENCE", MODES),
    15: ("## The alternative for a fixed-speed machine", ALTERNATIVE_TEXT),
    16: ('sheet.calc("absorber_stiffness_at_speed"', ALTERNATIVE),
    18: ('"equal peaks"', CHECKS),
    20: ("sheet.assume(", CLOSING),
}


# cell index -> (text, its replacement) inside a cell kept otherwise as it is
REPLACE = {
    4: (
        'speed_q = sheet.given("running_speed", running_speed, r"\\omega", "Running speed", "frequency")',
        'speed_q = sheet.given("running_speed", running_speed, r"\\Omega", "Running speed", "frequency")',
    ),
}


def main() -> None:
    nb = nbformat.read(NOTEBOOK, as_version=4)
    if len(nb.cells) != 21:
        raise SystemExit(f"{NOTEBOOK}: expected 21 cells, found {len(nb.cells)}; the script is out of date")
    for index, (marker, source) in EDITS.items():
        cell = nb.cells[index]
        if marker not in cell.source:
            raise SystemExit(f"{NOTEBOOK}: cell {index} does not hold {marker!r}; the script is out of date")
        cell.source = source.rstrip("\n")
        if cell.cell_type == "code":
            cell.outputs, cell.execution_count = [], None
    for index, (before, after) in REPLACE.items():
        cell = nb.cells[index]
        if before not in cell.source and after not in cell.source:
            raise SystemExit(f"{NOTEBOOK}: cell {index} holds neither {before!r} nor {after!r}")
        cell.source = cell.source.replace(before, after)
    nbformat.validate(nb)
    nbformat.write(nb, NOTEBOOK)
    print(f"wrote {NOTEBOOK}")


if __name__ == "__main__":
    main()
