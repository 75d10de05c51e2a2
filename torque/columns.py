"""Gravitational potential energy of lithospheric columns, from elevation and crust.

The gravitational potential energy per unit area of a column (N/m, equal to J/m^2) is the
lithostatic pressure integrated over the column's height, from its top down to a common
compensation depth ``L`` below sea level [1]_ (chapter 2, the force a compensated mountain
belt exerts) [2]_:

    U = int_{top}^{L} P(z) dz,   P(z) = g int_{top}^{z} rho dz'.

A column is layered: sea water (for an elevation below sea level), crust of density
``rho_c`` and thickness ``c``, then mantle of density ``rho_m`` down to ``L``; its pressure is
piecewise linear, so the integral is closed form. The difference of ``U`` between two columns
is the horizontal force per metre between them, and for columns in isostatic equilibrium
at or above ``L`` it does not depend on ``L``.

Continents are measured against a sea-level reference continent of crust ``c0``: without a
crustal thickness, a column's crust follows from its elevation by Airy isostasy against the
reference, ``c = c0 + (rho_m e + rho_w max(-e, 0)) / (rho_m - rho_c)``. The reference's own
potential energy against a mid-ocean ridge is one number (``sea_level_gpe_n_m``, default 0:
Coblentz, Richardson and Sandiford 1994 find continents near sea level close to ridge
values), since a crust-over-mantle column cannot place a continent against sea floor whose
density comes from its cooling. Sea floor of age ``t`` has potential energy ``-F_rp(t)``
against the ridge, with ``F_rp`` the cooling model's ridge push
(:class:`~torque.lithosphere.Cooling`), so that continents and sea floor share one zero.

References
----------
.. [1] Turcotte, D. L. and Schubert, G. (2002). *Geodynamics*, 2nd ed., chapter 2 (the
   horizontal force of an Airy-compensated mountain range, ``rho_c g h (h/2 + h_c + b/2)``;
   the section number is from memory).
.. [2] Coblentz, D. D., Richardson, R. M. and Sandiford, M. (1994). On the gravitational
   potential of the Earth's lithosphere. *Tectonics* 13, 929-945.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["ColumnModel"]


@dataclass(frozen=True)
class ColumnModel:
    """Densities and the reference continent of the column model (SI units).

    Attributes
    ----------
    crust_density, mantle_density, water_density : float
        kg/m^3. Crust 2800 is a textbook continental value (Turcotte and Schubert 2002,
        sec. 2-2, from memory); the mantle and water densities are the hypothesis's.
    gravity : float
        m/s^2.
    reference_crust_m : float
        Crust of the sea-level reference continent (35 km: common practice, no source).
    compensation_depth_m : float
        Depth below sea level to which columns are integrated (100 km); every crust must
        end above it.
    sea_level_gpe_n_m : float
        Potential energy of the reference continent minus that of a ridge, N/m.
    """

    crust_density: float = 2800.0
    mantle_density: float = 3330.0
    water_density: float = 1000.0
    gravity: float = 9.81
    reference_crust_m: float = 35e3
    compensation_depth_m: float = 100e3
    sea_level_gpe_n_m: float = 0.0

    def airy_crust_m(self, elevation_m) -> np.ndarray:
        """Crustal thickness (m) that puts a column of this elevation in Airy isostasy with
        the reference continent.

        Parameters
        ----------
        elevation_m : array_like
            Metres above sea level (negative: below, under water).

        Returns
        -------
        ndarray
            Metres; may be negative for elevations far below sea level (no crust
            balances them).

        Examples
        --------
        >>> m = ColumnModel()
        >>> float(m.airy_crust_m(0.0)), round(float(m.airy_crust_m(1000.0)))
        (35000.0, 41283)
        """
        e = np.asarray(elevation_m, float)
        water = np.maximum(-e, 0.0)
        return self.reference_crust_m + (self.mantle_density * e + self.water_density * water
                                         ) / (self.mantle_density - self.crust_density)

    def column_gpe(self, elevation_m, crust_m=None) -> np.ndarray:
        """``U``: the column's lithostatic pressure integrated from its top to the
        compensation depth, N/m.

        Parameters
        ----------
        elevation_m : array_like
            Surface elevation, m.
        crust_m : array_like, optional
            Crustal thickness, m; default the Airy crust of the elevation.

        Returns
        -------
        ndarray
            N/m (J/m^2). Absolute: only differences between columns mean a force.

        Raises
        ------
        ValueError
            Where the crust is not positive or ends below the compensation depth.
        """
        e = np.asarray(elevation_m, float)
        c = self.airy_crust_m(e) if crust_m is None else np.asarray(crust_m, float)
        e, c = np.broadcast_arrays(e, c)
        g, L = self.gravity, self.compensation_depth_m
        water = np.maximum(-e, 0.0)               # sea water above a submerged column
        base = -e + c                             # depth of the crust's base
        if np.any(c <= 0) or np.any(base > L):
            raise ValueError("every column needs a positive crust ending above the "
                             f"compensation depth ({L / 1e3:g} km)")
        mantle = L - base
        # stack the layers: pressure at each layer's top, then int P dz over the layer
        p = np.zeros_like(e)
        U = np.zeros_like(e)
        for h, rho in ((water, self.water_density), (c, self.crust_density),
                       (mantle, self.mantle_density)):
            U = U + p * h + 0.5 * rho * g * h * h
            p = p + rho * g * h
        return U

    def continental_gpe(self, elevation_m, crust_m=None) -> np.ndarray:
        """Potential energy of continental columns against a mid-ocean ridge, N/m.

        ``U(e, c) - U(0, c0) + sea_level_gpe_n_m``.

        Parameters
        ----------
        elevation_m : array_like
            m.
        crust_m : array_like, optional
            m; default the Airy crust.

        Returns
        -------
        ndarray
            N/m.

        Examples
        --------
        A 2 km plateau in Airy isostasy, as the mountain-range formula
        ``rho_c g h (h/2 + c0 + b/2)`` with root ``b = rho_c h / (rho_m - rho_c)``:

        >>> m = ColumnModel()
        >>> b = 2800 * 2000 / 530
        >>> want = 2800 * 9.81 * 2000 * (1000 + 35e3 + b / 2)
        >>> bool(abs(float(m.continental_gpe(2000.0)) / want - 1) < 1e-12)
        True
        """
        return (self.column_gpe(elevation_m, crust_m) - self.column_gpe(0.0)
                + self.sea_level_gpe_n_m)
