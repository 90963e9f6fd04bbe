"""Projected Newton in a box against known minima."""

import numpy as np
import pytest
from scipy import optimize

from spikevar.recovery.box_newton import minimise_in_box


def rosenbrock(x):
    # scipy's reference function, gradient and Hessian (Rosenbrock 1960, Comput J 3:175)
    return optimize.rosen(x), optimize.rosen_der(x), optimize.rosen_hess(x)


def test_unconstrained_minimum_of_the_rosenbrock_function():
    # non-convex away from the minimum at (1, 1): the Hessian shift keeps steps downhill
    res = minimise_in_box(rosenbrock, [-1.2, 1.0], [-5.0, -5.0], [5.0, 5.0])
    assert res.success
    np.testing.assert_allclose(res.x, [1.0, 1.0], atol=1e-8)


def test_minimum_on_a_bound_matches_scipy():
    # the box cuts the minimum off: the answer is on the bound x0 = 0.5 with the other
    # coordinate optimised along it, as L-BFGS-B finds it
    lower, upper = np.array([-2.0, -2.0]), np.array([0.5, 2.0])
    res = minimise_in_box(rosenbrock, [-1.0, 1.5], lower, upper)
    ref = optimize.minimize(optimize.rosen, [-1.0, 1.5], jac=optimize.rosen_der,
                            method="L-BFGS-B", bounds=list(zip(lower, upper, strict=True)),
                            options={"gtol": 1e-12, "ftol": 1e-15})
    assert res.success
    np.testing.assert_allclose(res.x, ref.x, atol=1e-6)
    assert res.x[0] == pytest.approx(0.5) and res.projected_grad[0] == 0.0


def test_steps_stay_clear_of_an_open_upper_bound():
    # f = -log(1 - x) - 3 x: singular at x = 1, minimum at x = 2/3
    def fun(x):
        v = x[0]
        if v >= 1:
            return np.inf, np.zeros(1), np.eye(1)
        return (-np.log1p(-v) - 3 * v, np.array([1 / (1 - v) - 3]),
                np.array([[1 / (1 - v) ** 2]]))

    res = minimise_in_box(fun, [0.0], [0.0], [1.0 - 1e-9], open_upper=[True])
    assert res.success and res.x[0] == pytest.approx(2 / 3, abs=1e-9)
    assert res.evaluations < 12


def test_badly_scaled_variables_converge_in_a_few_steps():
    # a positive-definite quadratic whose curvatures are 1e9 apart (as the recovery
    # likelihood's are when the dead time nears the shortest interval): Newton's method is
    # exact in one step; a test for definiteness relative to the largest curvature would
    # shift the small one and crawl
    hess = np.array([[0.4, 70.0], [70.0, 5e9]])
    centre = np.array([1.0, 2.0])

    def fun(x):
        dx = x - centre
        return 0.5 * dx @ hess @ dx, hess @ dx, hess

    res = minimise_in_box(fun, [-3.0, 2.0001], [-10.0, -10.0], [10.0, 10.0])
    assert res.success and res.evaluations <= 4
    np.testing.assert_allclose(res.x, centre, atol=1e-9)


def test_many_problems_at_once_take_the_steps_of_each_alone():
    # minimise_in_boxes must stop every problem where minimise_in_box stops it (same steps,
    # cuts and messages): Rosenbrock from several starts, boxes that cut the minimum off,
    # and one start outside the box
    from spikevar.recovery.box_newton import minimise_in_boxes

    starts = np.array([[-1.2, 1.0], [-1.0, 1.5], [2.0, -1.0], [0.3, 0.3], [9.0, 9.0]])
    lower = np.array([[-5.0, -5.0], [-2.0, -2.0], [-3.0, -3.0], [0.0, 0.0], [-5.0, -5.0]])
    upper = np.array([[5.0, 5.0], [0.5, 2.0], [3.0, 3.0], [0.8, 0.5], [5.0, 5.0]])

    def many(x, rows):
        return (np.array([optimize.rosen(v) for v in x]),
                np.array([optimize.rosen_der(v) for v in x]),
                np.array([optimize.rosen_hess(v) for v in x]))

    together = minimise_in_boxes(many, starts, lower, upper)
    for k in range(len(starts)):
        alone = minimise_in_box(rosenbrock, starts[k], lower[k], upper[k])
        np.testing.assert_array_equal(together.x[k], alone.x)
        assert together.message[k] == alone.message
        assert together.success[k] == alone.success
        assert together.evaluations[k] == alone.evaluations
