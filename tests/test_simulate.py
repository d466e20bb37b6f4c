"""The microkinetic engine (qcthermo.simulate) on networks whose answers are known in closed form: the Bateman
solution of first-order chains, the law of mass action at equilibrium, conservation of atoms, the steady
state of a two-step catalytic cycle (Briggs-Haldane), the Smoluchowski/Stokes-Einstein diffusion limit."""

import numpy as np
import pytest
from scipy import constants
from scipy.integrate import quad

from qcthermo.errors import SimulationError
from qcthermo.simulate import (
    WATER_VISCOSITY_PA_S,
    Network,
    degree_of_rate_control,
    diffusion_rate,
    equilibrium_constant,
    formation_rate,
    integrate,
)

HARTREE_J = constants.physical_constants["Hartree energy"][0]
KT_EH = constants.k * 298.15 / HARTREE_J


def chain(k1: float, k2: float, k3: float | None = None) -> Network:
    """A -> B -> C (-> D), irreversible first-order steps."""
    names = ("A", "B", "C", "D") if k3 else ("A", "B", "C")
    steps = [(0,), (1,), (2,)][: len(names) - 1]
    ks = [k1, k2, k3][: len(names) - 1]
    return Network(names, tuple(f"r{i}" for i in range(len(ks))), tuple(steps), tuple((i + 1,) for i in range(len(ks))),
                   np.array(ks)[:, None], np.zeros((len(ks), 1)), np.array([298.15]))


def bateman(t: np.ndarray, ks: list[float], n: int) -> np.ndarray:
    """Bateman, Proc. Cambridge Philos. Soc. 1910, 15, 423: N_n(t) = N_1(0) prod_{i<n} k_i
    sum_{i<=n} exp(-k_i t) / prod_{j<=n, j!=i} (k_j - k_i), with k_n = 0 for the last (stable) member."""
    rates = list(ks[:n - 1]) + ([ks[n - 1]] if n - 1 < len(ks) else [0.0])
    total = np.zeros_like(t)
    for i in range(n):
        others = np.prod([rates[j] - rates[i] for j in range(n) if j != i])
        total += np.exp(-rates[i] * t) / others
    return np.prod(ks[:n - 1]) * total


@pytest.mark.parametrize("method", ["BDF", "Radau", "LSODA"])
def test_first_order_chain_follows_the_bateman_solution(method):
    ks = [3.0, 0.4, 0.05]
    t = np.logspace(-3, 2.5, 40)
    run = integrate(chain(*ks), {"A": 1.0}, t, method=method, rtol=1e-10, atol=1e-16)
    assert run.success
    for n in (1, 2, 3):
        np.testing.assert_allclose(run.concentrations[1:, n - 1], bateman(t, ks, n), rtol=1e-6, atol=1e-12)
    # D, the stable end of the chain, takes the rest (conservation)
    np.testing.assert_allclose(run.concentrations.sum(axis=1), 1.0, rtol=1e-12)


def test_the_chain_check_fails_when_a_rate_constant_is_misplaced():
    """The Bateman comparison is sharp: swapping k1 and k2 changes B(t) visibly."""
    t = np.logspace(-2, 1, 10)
    run = integrate(chain(0.4, 3.0), {"A": 1.0}, t, rtol=1e-10, atol=1e-16)
    assert np.max(np.abs(run.concentrations[1:, 1] - bateman(t, [3.0, 0.4], 2))) > 0.1


def association(dG_kcal: float, c0_M: float, kf: float = 1e3) -> tuple[Network, float]:
    """A + B <-> C with k_r from K_c (detailed balance), dG in kcal/mol in the standard state c0."""
    dg = dG_kcal * 4184.0 / constants.N_A / HARTREE_J
    k_c = float(equilibrium_constant(dg, 298.15, -1, c0_M))
    net = Network(("A", "B", "C"), ("assoc",), ((0, 1),), ((2,),), np.array([[kf]]), np.array([[kf / k_c]]),
                  np.array([298.15]))
    return net, k_c


def test_association_reaches_the_equilibrium_constant_at_1M():
    # law of mass action: [C] c0 / ([A][B]) = exp(-dG/RT) at equilibrium, c0 = 1 mol/L
    dg = -2.0
    net, _ = association(dg, 1.0)
    run = integrate(net, {"A": 0.1, "B": 0.05}, [1e6], rtol=1e-11, atol=1e-18)
    a, b, c = run.concentrations[-1]
    expected = np.exp(-dg * 4184.0 / (constants.R * 298.15))
    assert c * 1.0 / (a * b) == pytest.approx(expected, rel=1e-7)


def test_gas_association_reaches_kp_at_1atm():
    # at a 1 atm standard state, c0 = p0 / RT: K_p = (p_C p0) / (p_A p_B) = exp(-dG/RT) with p_i = c_i R T
    p0 = constants.atm
    c0 = p0 / (constants.R * 298.15) / 1000.0
    dg = 1.5
    net, _ = association(dg, c0)
    run = integrate(net, {"A": 0.03, "B": 0.02}, [1e6], rtol=1e-11, atol=1e-18)
    p_a, p_b, p_c = run.concentrations[-1] * 1000.0 * constants.R * 298.15
    assert p_c * p0 / (p_a * p_b) == pytest.approx(np.exp(-dg * 4184.0 / (constants.R * 298.15)), rel=1e-7)


def test_elements_are_conserved_to_1e_10_at_every_time():
    """H2 + I2 <-> 2 HI and HI <-> H + I side steps: the atoms of H and I are what they were at t = 0."""
    names = ("H2", "I2", "HI", "H", "I")
    formula = np.array([[2, 0], [0, 2], [1, 1], [1, 0], [0, 1]], dtype=float)  # columns H, I
    net = Network(names, ("hi", "h_loss", "i_loss"), ((0, 1), (2,), (1,)), ((2, 2), (3, 4), (4, 4)),
                  np.array([[2.0], [1e-3], [5e-2]]), np.array([[0.3], [1e4], [7e5]]), np.array([298.15]))
    run = integrate(net, {"H2": 0.7, "I2": 0.4}, np.logspace(-4, 4, 60))
    assert run.success
    atoms = run.concentrations @ formula
    np.testing.assert_allclose(atoms, np.tile(atoms[0], (len(atoms), 1)), rtol=1e-10, atol=0)
    assert run.concentrations[-1, 2] > 0.1  # something did happen


def cycle(k1=2.0, k_1=0.5, k2=3.0, substrate=0.8) -> Network:
    """cat + S <-> I, I -> cat + P: a two-step catalytic cycle with S and P at fixed concentrations."""
    net = Network(("cat", "S", "I", "P"), ("bind", "turn"), ((0, 1), (2,)), ((2,), (0, 3)),
                  np.array([[k1], [k2]]), np.array([[k_1], [0.0]]), np.array([298.15]))
    return net


def test_cycle_steady_state_and_degree_of_rate_control_sum_to_one():
    """Briggs and Haldane, Biochem. J. 1925, 19, 338: r = k1 k2 [S] [cat]_0 / (k1 [S] + k_-1 + k2); with K_1
    fixed, X_bind = k2 / (k1 [S] + k_-1 + k2) and X_turn = 1 - X_bind (Campbell's degree of rate control,
    differentiated by hand); they sum to 1 (Kozuch and Shaik, Acc. Chem. Res. 2011, 44, 101)."""
    k1, k_1, k2, s, cat = 2.0, 0.5, 3.0, 0.8, 1e-3
    net = cycle(k1, k_1, k2, s)
    initial = {"cat": cat, "S": s, "P": 0.0}
    run = integrate(net, initial, [100.0], fixed=["S", "P"], rtol=1e-11, atol=1e-20)
    rate = formation_rate(net, run.rates, "P")[-1]
    denominator = k1 * s + k_1 + k2
    assert rate == pytest.approx(k1 * k2 * s * cat / denominator, rel=1e-8)
    x = degree_of_rate_control(net, initial, 100.0, "P", fixed=["S", "P"])
    assert x["bind"] == pytest.approx(k2 / denominator, abs=1e-5)
    assert x["turn"] == pytest.approx((k1 * s + k_1) / denominator, abs=1e-5)
    assert sum(x.values()) == pytest.approx(1.0, abs=1e-5)


def test_diffusion_limit_in_water():
    # k_D = 8RT/(3 eta) = 7.4e9 M^-1 s^-1 for water at 298 K (the textbook value, e.g. Atkins' Physical
    # Chemistry; from memory), half of it for two molecules of one species
    assert diffusion_rate(298.15, WATER_VISCOSITY_PA_S) == pytest.approx(7.4e9, rel=0.01)
    assert diffusion_rate(298.15, WATER_VISCOSITY_PA_S, identical=True) == pytest.approx(3.7e9, rel=0.01)


def test_temperature_program_follows_the_integral_of_k():
    """A -> B with Arrhenius k(T) = A exp(-Ea/RT) under a linear ramp 300 -> 360 K over 1000 s: first order, so
    [A] = exp(-integral k(T(t)) dt), the integral by quadrature (scipy.integrate.quad). ln k is linear in
    1/T, so the engine's interpolation between grid temperatures is exact for this k."""
    grid = np.array([300.0, 320.0, 340.0, 360.0])
    arrhenius = lambda temp: 1e9 * np.exp(-70e3 / (constants.R * temp))  # noqa: E731
    net = Network(("A", "B"), ("r",), ((0,),), ((1,),), arrhenius(grid)[None, :], np.zeros((1, 4)), grid)
    program = [(0.0, 300.0), (1000.0, 360.0)]
    t = np.array([250.0, 500.0, 1000.0])
    run = integrate(net, {"A": 1.0}, t, temperature=program, rtol=1e-10, atol=1e-16)
    expected = [np.exp(-quad(lambda x: arrhenius(300.0 + 0.06 * x), 0, end)[0]) for end in t]
    np.testing.assert_allclose(run.concentrations[1:, 0], expected, rtol=1e-6)


@pytest.mark.parametrize("initial, times, message", [
    ({"A": -0.1}, [1.0], "finite and >= 0"),
    ({"A": float("nan")}, [1.0], "finite and >= 0"),
    ({"Z": 1.0}, [1.0], "not a species"),
    ({"A": 1.0}, [0.0], "> 0 s"),
    ({"A": 1.0}, [-5.0], "> 0 s"),
])
def test_bad_input_is_one_line(initial, times, message):
    with pytest.raises(SimulationError, match=message) as err:
        integrate(chain(1.0, 1.0), initial, times)
    assert "\n" not in str(err.value)


def test_a_network_without_reactions_is_refused():
    with pytest.raises(SimulationError, match="no reaction"):
        Network(("A",), (), (), (), np.zeros((0, 1)), np.zeros((0, 1)), np.array([298.15]))


def test_a_solver_failure_is_returned_with_the_time_reached():
    # 2 A -> B with k = 1e300 M^-1 s^-1: the first step already needs a step below the spacing of doubles
    net = Network(("A", "B"), ("r",), ((0, 0),), ((1,),), np.array([[1e300]]), np.array([[0.0]]), np.array([298.15]))
    run = integrate(net, {"A": 1.0}, [1.0])
    assert not run.success and run.time_reached < 1.0 and run.message


def test_the_analytic_jacobian_is_the_derivative_of_the_rates():
    """d(dc/dt)/dc of a network with uni-, bi- and termolecular steps and a fixed species against central finite
    differences (the definition of the derivative; step 1e-6 relative, agreement to 1e-6)."""
    from qcthermo.simulate import _MassAction, temperature_program

    net = Network(("A", "B", "C", "D", "E"), ("r1", "r2", "r3", "r4"), ((0, 1), (2,), (0, 0, 3), (4,)),
                  ((2,), (3, 4), (1, 4), (0, 0)), np.array([[2.0], [0.3], [5.0], [0.7]]),
                  np.array([[0.1], [4.0], [0.2], [1.5]]), np.array([298.15]))
    system = _MassAction(net, {1: 0.4}, temperature_program(298.15))  # B held fixed
    y = np.array([0.3, 0.2, 0.05, 0.6])
    analytic = system.jacobian(0.0, y).toarray()
    numeric = np.empty_like(analytic)
    for i in range(len(y)):
        h = 1e-6 * y[i]
        up, down = y.copy(), y.copy()
        up[i] += h
        down[i] -= h
        numeric[:, i] = (system.rhs(0.0, up) - system.rhs(0.0, down)) / (2 * h)
    np.testing.assert_allclose(analytic, numeric, rtol=1e-6, atol=1e-9)
