"""Power-limited vehicle dynamics: tractive force against road loads.

Pure functions in SI units. The model is the resistance-based vehicle dynamics
model of Rakha et al. (2001), with the variable-power extension of Rakha and
Lucic (2002) for the build-up of power through the gears at low speed:

.. math::

    \\lambda m \\frac{dv}{dt} = F_t(v) - R_a(v) - R_r(v) - R_g          (1)

    F_t(v) = \\min\\left(\\frac{\\eta\\, f_p(v)\\, f_h P}{v},\\;
             \\mu\\, m_{ta}\\, g\\right)                                    (2)

    f_p(v) = \\min\\left(1,\\; p_0 + (1 - p_0) \\frac{v}{v_p}\\right)       (3)

    R_a = \\tfrac{1}{2} \\rho(h) C_d A v^2                                 (4)

    R_r = m g \\cos\\theta \\; C_r (c_2 V + c_3) / 1000, \\quad V \\text{ in km/h}   (5)

    R_g = m g \\sin\\theta, \\quad \\tan\\theta = G                        (6)

with lambda the rotating-mass factor, eta the driveline efficiency, P the rated
engine power, f_h the elevation correction of engine power, mu the
tyre-pavement adhesion coefficient and m_ta the mass on the driven axles.

References
----------
.. [1] Rakha, H., Lucic, I., Demarchi, S. H., Setti, J. R., and Van Aerde, M.
   (2001). "Vehicle dynamics model for predicting maximum truck acceleration
   levels." J. Transp. Eng. 127(5), 418-425. doi:10.1061/(ASCE)0733-947X(2001)127:5(418).
   Equations (1), (2), (4), (5); the rolling-resistance constants
   c2 = 0.0328, c3 = 4.575 (radial tyres) are quoted from memory.
.. [2] Rakha, H., and Lucic, I. (2002). "Variable power vehicle dynamics model
   for estimating maximum truck acceleration levels." J. Transp. Eng. 128(5),
   412-419. Equation (3); the linear form is from memory.
.. [3] ISO 2533:1975, Standard Atmosphere: air density in the troposphere,
   rho = rho0 (1 - L h / T0)^(g M / (R L) - 1).
.. [4] Fitch, J. W. (1994). Motor Truck Engineering Handbook, 4th ed. SAE.
   Pavement factor C_r of Eq. (5), as tabulated by Rakha et al. (2001):
   portland cement concrete 1.00 (excellent), 1.50 (good), 2.00 (poor);
   asphalt 1.25 (good), 1.75 (fair), 2.25 (poor) (from memory). Rakha and Yu
   found the capacity manual's truck curves consistent with a 120 kg/kW truck
   on fair asphalt, C_r = 1.75.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

FloatArray = NDArray[np.float64]

STANDARD_GRAVITY = 9.80665  # m/s^2, ISO 80000-3
SEA_LEVEL_AIR_DENSITY = 1.225  # kg/m^3, ISO 2533
_LAPSE_RATE = 0.0065  # K/m, ISO 2533 troposphere
_SEA_LEVEL_TEMPERATURE = 288.15  # K, ISO 2533
_DENSITY_EXPONENT = 4.2558  # g M / (R L) - 1, ISO 2533
_KMH_PER_MS = 3.6


def air_density(elevation: ArrayLike) -> FloatArray:
    """Air density of the standard atmosphere at an elevation. [kg/m^3]

    .. math:: \\rho(h) = \\rho_0 \\left(1 - \\frac{L h}{T_0}\\right)^{4.2558}

    Valid in the troposphere (h below 11 km); ISO 2533:1975 [3].

    Examples
    --------
    >>> round(float(air_density(0.0)), 3)
    1.225
    >>> round(float(air_density(1500.0)), 3)  # ISA table: 1.058 kg/m^3
    1.058
    """
    h = np.asarray(elevation, dtype=float)
    return SEA_LEVEL_AIR_DENSITY * (1.0 - _LAPSE_RATE * h / _SEA_LEVEL_TEMPERATURE) ** _DENSITY_EXPONENT


def rolling_resistance_coefficient(speed: ArrayLike, surface: float, c2: float, c3: float) -> FloatArray:
    """Rolling-resistance coefficient (force over normal load). [-]

    .. math:: f_r = C_r (c_2 V + c_3) / 1000, \\quad V \\text{ in km/h}

    Rakha et al. (2001) [1], after Fitch (1994) [4].

    Parameters
    ----------
    speed : array_like
        Vehicle speed. [m/s]
    surface : float
        Pavement factor C_r [4]: concrete 1.00 excellent, 1.50 good, 2.00
        poor; asphalt 1.25 good, 1.75 fair, 2.25 poor. [-]
    c2 : float
        Tyre speed term. [1/(km/h)]
    c3 : float
        Tyre constant term. [-]
    """
    v_kmh = np.asarray(speed, dtype=float) * _KMH_PER_MS
    return surface * (c2 * v_kmh + c3) / 1000.0


@dataclass(frozen=True, slots=True)
class PowerLimitedVehicle:
    """Physical parameters of a power-limited vehicle (SI units).

    Attributes
    ----------
    mass : float
        Test mass (gross). [kg]
    power : float
        Rated net engine power at sea level. [W]
    efficiency : float
        Driveline efficiency eta. [-]
    drag_coefficient : float
        Aerodynamic drag coefficient C_d. [-]
    frontal_area : float
        Frontal area A. [m^2]
    rolling_surface : float
        Pavement factor C_r of Eq. (5). [-]
    rolling_c2, rolling_c3 : float
        Tyre constants of Eq. (5). [1/(km/h)], [-]
    driven_axle_share : float
        Share of the mass carried by the driven axles. [-]
    adhesion : float
        Tyre-pavement coefficient of adhesion mu. [-]
    mass_factor : float
        Rotating-mass factor lambda (>= 1). [-]
    power_at_rest : float
        Share of power available at zero speed p_0, Eq. (3); 1 gives a
        constant-power model. [-]
    full_power_speed : float
        Speed v_p above which full power is available, Eq. (3). [m/s]
    power_elevation_exponent : float
        Engine power scales as (rho(h)/rho0)^k: k = 1 for a naturally
        aspirated engine, smaller for a turbocharged one, 0 for none. [-]
    """

    mass: float
    power: float
    efficiency: float
    drag_coefficient: float
    frontal_area: float
    rolling_surface: float
    rolling_c2: float
    rolling_c3: float
    driven_axle_share: float
    adhesion: float
    mass_factor: float = 1.0
    power_at_rest: float = 1.0
    full_power_speed: float = 1.0
    power_elevation_exponent: float = 0.0

    @property
    def weight_to_power(self) -> float:
        """Mass over rated power. [kg/W]"""
        return self.mass / self.power

    def tractive_force(self, speed: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        """Maximum tractive force at the driven wheels, Eqs. (2)-(3). [N]"""
        return self._tractive_force(np.asarray(speed, dtype=float), air_density(elevation))

    def resistance(self, speed: ArrayLike, grade: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        """Total road load: aerodynamic, rolling and grade, Eqs. (4)-(6). [N]"""
        return self._resistance(np.asarray(speed, dtype=float), np.asarray(grade, dtype=float), air_density(elevation))

    def acceleration(self, speed: ArrayLike, grade: ArrayLike, elevation: ArrayLike = 0.0) -> FloatArray:
        """Maximum acceleration, Eq. (1). [m/s^2]"""
        v, density = np.asarray(speed, dtype=float), air_density(elevation)
        net = self._tractive_force(v, density) - self._resistance(v, np.asarray(grade, dtype=float), density)
        return np.asarray(net / (self.mass_factor * self.mass), dtype=float)

    def _tractive_force(self, speed: FloatArray, density: FloatArray) -> FloatArray:
        v = np.maximum(speed, 1e-9)
        density_ratio = density / SEA_LEVEL_AIR_DENSITY
        power_share = np.minimum(1.0, self.power_at_rest + (1.0 - self.power_at_rest) * v / self.full_power_speed)
        engine = self.efficiency * power_share * self.power * density_ratio**self.power_elevation_exponent / v
        adhesion_limit = self.adhesion * self.driven_axle_share * self.mass * STANDARD_GRAVITY
        return np.asarray(np.minimum(engine, adhesion_limit), dtype=float)

    def _resistance(self, v: FloatArray, grade: FloatArray, density: FloatArray) -> FloatArray:
        weight = self.mass * STANDARD_GRAVITY
        secant = np.sqrt(1.0 + grade**2)  # tan(theta) = G: cos(theta) = 1/sec, sin(theta) = G/sec
        aerodynamic = 0.5 * density * self.drag_coefficient * self.frontal_area * v**2
        rolling = (
            weight / secant * rolling_resistance_coefficient(v, self.rolling_surface, self.rolling_c2, self.rolling_c3)
        )
        return np.asarray(aerodynamic + rolling + weight * grade / secant, dtype=float)
