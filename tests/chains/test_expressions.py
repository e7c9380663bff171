"""Safe expressions: allowed arithmetic is computed, anything else is refused."""

import numpy as np
import pytest
from numpy.testing import assert_allclose

from agepost.chains.expressions import is_plain_name, parse_expression
from agepost.errors import ChainFormatError

COLUMNS = {
    "omega_b": np.array([0.0224, 0.0220]),
    "omega_c": np.array([0.120, 0.118]),
    "H0": np.array([67.5, 70.0]),
}


def test_physical_densities_to_omega_m_by_hand():
    expression = parse_expression("(omega_b + omega_c) / (H0 / 100)**2")
    assert expression.columns == ("omega_b", "omega_c", "H0")
    # hand calculation: (0.0224 + 0.120) / 0.675^2 = 0.1424 / 0.455625 = 0.3125377...
    #                   (0.0220 + 0.118) / 0.700^2 = 0.1400 / 0.49     = 0.2857142...
    assert_allclose(expression.evaluate(COLUMNS), [0.1424 / 0.455625, 0.14 / 0.49], rtol=1e-14)


def test_functions_unary_minus_and_numbers():
    columns = {"x": np.array([1.0, 4.0])}
    # sqrt(4) = 2, exp(log(4)) = 4, -x + 2.5 = -1.5: plain arithmetic by hand
    assert_allclose(parse_expression("sqrt(x)").evaluate(columns), [1.0, 2.0], rtol=1e-15)
    assert_allclose(parse_expression("exp(log(x))").evaluate(columns), [1.0, 4.0], rtol=1e-14)
    assert_allclose(parse_expression("-x + 2.5").evaluate(columns), [1.5, -1.5], rtol=1e-15)
    assert_allclose(parse_expression("2 ** 3 + 0 * x").evaluate(columns), [8.0, 8.0], rtol=0)


def test_constant_expression_has_one_value_per_row():
    assert parse_expression("0.3").evaluate(COLUMNS).shape == (2,)


@pytest.mark.parametrize(
    ("text", "pattern"),
    [
        ("__import__('os').system('true')", "not allowed"),
        ("H0.real", "not allowed"),
        ("H0[0]", "not allowed"),
        ("H0 if H0 else 0", "not allowed"),
        ("H0 > 1", "not allowed"),
        ("H0 // 2", "not allowed"),
        ("sin(H0)", "not allowed"),
        ("sqrt", "must be called"),
        ("sqrt(H0, 2)", "exactly one argument"),
        ("'H0'", "not allowed"),
        ("lambda: 1", "not allowed"),
        ("H0 +", "not a valid arithmetic expression"),
    ],
)
def test_anything_outside_the_allow_list_is_refused(text, pattern):
    with pytest.raises(ChainFormatError, match=pattern):
        parse_expression(text, where="mapping.H0")


def test_unknown_column_is_named_with_the_nearest():
    expression = parse_expression("omega_cc / 2")
    with pytest.raises(ChainFormatError, match="'omega_cc'.*did you mean 'omega_c'"):
        expression.evaluate(COLUMNS)


def test_plain_names():
    assert is_plain_name("Omega_m")
    assert not is_plain_name("100*h")
