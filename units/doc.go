// Package units parses engineering unit strings and converts quantities to
// coherent SI.
//
// A unit string such as "kg/h", "kJ/(kg*K)", "m^3/h" or "Pa^0.5" parses to a
// Unit: its SI dimension (a Dim with rational exponents of m, kg, s, A, K,
// mol and cd), its scale to SI and, for an affine unit used alone (degC,
// degF, barg, psig, kPag, MPag), an offset for absolute values:
//
//	SI = v*Scale + Offset    (absolute values: Unit.ToSI)
//	SI = dv*Scale            (differences, gains, spans: Unit.DiffToSI)
//
// Write compound units with parentheses: operators of equal rank apply left
// to right, so "kJ/kg*K" is (kJ/kg)*K, not kJ/(kg*K).
//
// Symbols known (an SI prefix Y Z E P T G M k h da d c m u µ n p f a z y may
// stand before those marked *):
//
//	length       m*, in, ft, mi
//	mass         g*, t (tonne), lb, lbm
//	time         s*, min, h, hr, d
//	amount       mol*, lbmol
//	temperature  K*, degR (°R), degC (°C), degF (°F)
//	current      A*;  luminous intensity cd*
//	volume       L* (l*), gal (US), gal_uk, bbl (US oil barrel)
//	force        N*, lbf, kgf
//	pressure     Pa*, bar*, bara, atm, psi, psia, torr, mmHg, inH2O,
//	             gauge: barg, psig, kPag, MPag (absolute = gauge + 101325 Pa)
//	energy       J*, cal* (thermochemical, 4.184 J), cal_IT* (4.1868 J),
//	             Btu (IT; also BTU, Btu_IT), MMBtu, Wh* (kWh)
//	power        W*, hp (mechanical)
//	frequency    Hz*;  dynamic viscosity P* (poise, for cP)
//	fractions    % (0.01), ppm (1e-6), ppb (1e-9)
//
// Conversion factors follow NIST Special Publication 811 (2008), Appendix
// B.8. The package keeps no state; every function is safe for concurrent use.
package units
