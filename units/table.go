package units

import "math"

// def is one unit symbol. Its SI scale is factor*10^exp10, times 10^p for an
// SI prefix p when prefix is true. An affine unit has a non-zero offset: it is
// used for absolute values when the unit stands alone.
type def struct {
	dim    Dim
	factor float64
	exp10  int
	offset float64
	prefix bool
}

// Dimensions used by the table.
var (
	dLength   = dimOf(1, 0, 0, 0, 0, 0, 0)
	dMass     = dimOf(0, 1, 0, 0, 0, 0, 0)
	dTime     = dimOf(0, 0, 1, 0, 0, 0, 0)
	dCurrent  = dimOf(0, 0, 0, 1, 0, 0, 0)
	dTemp     = dimOf(0, 0, 0, 0, 1, 0, 0)
	dAmount   = dimOf(0, 0, 0, 0, 0, 1, 0)
	dLuminous = dimOf(0, 0, 0, 0, 0, 0, 1)
	dVolume   = dimOf(3, 0, 0, 0, 0, 0, 0)
	dForce    = dimOf(1, 1, -2, 0, 0, 0, 0)
	dPressure = dimOf(-1, 1, -2, 0, 0, 0, 0)
	dEnergy   = dimOf(2, 1, -2, 0, 0, 0, 0)
	dPower    = dimOf(2, 1, -3, 0, 0, 0, 0)
	dFreq     = dimOf(0, 0, -1, 0, 0, 0, 0)
	dViscous  = dimOf(-1, 1, -1, 0, 0, 0, 0)
	dNone     = Dim{}
)

// Exact conversion factors. Sources: NIST SP 811 (2008) Appendix B.8, as
// collected in /work/shared/checkvalues.md §6, unless a comment says otherwise.
const (
	inch        = 0.0254                     // exact
	foot        = 0.3048                     // exact
	mile        = 1609.344                   // exact (international mile)
	pound       = 0.45359237                 // exact (SP 811 fn. 22)
	gravity     = 9.80665                    // standard acceleration of gravity, exact
	poundForce  = pound * gravity            // 4.4482216152605 N, exact (fn. 23)
	atmosphere  = 101325.0                   // exact
	usGallon    = 231 * inch * inch * inch   // 3.785411784e-3 m^3, exact
	ukGallon    = 4.54609e-3                 // exact
	oilBarrel   = 42 * usGallon              // 0.158987294928 m^3, exact
	calTh       = 4.184                      // thermochemical calorie, exact
	calIT       = 4.1868                     // International Table calorie, exact
	btuIT       = 1055.05585262              // International Table Btu, exact (fn. 9)
	mmHgConv    = 13595.1 * gravity * 1e-3   // 133.322387415 Pa, conventional (SP 811 table: 1.333224E+02)
	inH2OConv   = 1000 * gravity * inch      // 249.08891 Pa, conventional (from memory: water at 1000 kg/m^3)
	horsepower  = 550 * foot * poundForce    // mechanical horsepower, 745.699 W (550 ft*lbf/s, common practice)
	rankine     = 5.0 / 9.0                  // K per degR, degF
	zeroCelsius = 273.15                     // K, exact
	psi         = poundForce / (inch * inch) // lbf/in^2 = 6894.757293168361 Pa
)

// Go evaluates the constant expressions above exactly and rounds once, so
// each derived factor is the float64 nearest to its exact value.

// table holds every unit symbol. It is read-only.
var table = map[string]def{
	// length
	"m":  {dim: dLength, factor: 1, prefix: true},
	"in": {dim: dLength, factor: inch},
	"ft": {dim: dLength, factor: foot},
	"mi": {dim: dLength, factor: mile},

	// mass
	"g":   {dim: dMass, factor: 1, exp10: -3, prefix: true},
	"t":   {dim: dMass, factor: 1000},
	"lb":  {dim: dMass, factor: pound},
	"lbm": {dim: dMass, factor: pound},

	// time
	"s":   {dim: dTime, factor: 1, prefix: true},
	"min": {dim: dTime, factor: 60},
	"h":   {dim: dTime, factor: 3600},
	"hr":  {dim: dTime, factor: 3600},
	"d":   {dim: dTime, factor: 86400},

	// amount of substance
	"mol":   {dim: dAmount, factor: 1, prefix: true},
	"lbmol": {dim: dAmount, factor: pound * 1000},

	// temperature: absolute scales, then the affine ones (offset to kelvin)
	"K":    {dim: dTemp, factor: 1, prefix: true},
	"degR": {dim: dTemp, factor: rankine},
	"°R":   {dim: dTemp, factor: rankine},
	"degC": {dim: dTemp, factor: 1, offset: zeroCelsius},
	"°C":   {dim: dTemp, factor: 1, offset: zeroCelsius},
	"℃":    {dim: dTemp, factor: 1, offset: zeroCelsius},
	"degF": {dim: dTemp, factor: rankine, offset: 459.67 * rankine},
	"°F":   {dim: dTemp, factor: rankine, offset: 459.67 * rankine},
	"℉":    {dim: dTemp, factor: rankine, offset: 459.67 * rankine},

	// electric current, luminous intensity
	"A":  {dim: dCurrent, factor: 1, prefix: true},
	"cd": {dim: dLuminous, factor: 1, prefix: true},

	// volume
	"L":      {dim: dVolume, factor: 1, exp10: -3, prefix: true},
	"l":      {dim: dVolume, factor: 1, exp10: -3, prefix: true},
	"gal":    {dim: dVolume, factor: usGallon},
	"gal_uk": {dim: dVolume, factor: ukGallon},
	"bbl":    {dim: dVolume, factor: oilBarrel},

	// force
	"N":   {dim: dForce, factor: 1, prefix: true},
	"lbf": {dim: dForce, factor: poundForce},
	"kgf": {dim: dForce, factor: gravity},

	// pressure: absolute, then gauge (absolute = gauge + 1 atm)
	"Pa":    {dim: dPressure, factor: 1, prefix: true},
	"bar":   {dim: dPressure, factor: 1, exp10: 5, prefix: true},
	"bara":  {dim: dPressure, factor: 1, exp10: 5},
	"atm":   {dim: dPressure, factor: atmosphere},
	"psi":   {dim: dPressure, factor: psi},
	"psia":  {dim: dPressure, factor: psi},
	"torr":  {dim: dPressure, factor: atmosphere / 760},
	"Torr":  {dim: dPressure, factor: atmosphere / 760},
	"mmHg":  {dim: dPressure, factor: mmHgConv},
	"inH2O": {dim: dPressure, factor: inH2OConv},
	"barg":  {dim: dPressure, factor: 1, exp10: 5, offset: atmosphere},
	"psig":  {dim: dPressure, factor: psi, offset: atmosphere},
	"kPag":  {dim: dPressure, factor: 1, exp10: 3, offset: atmosphere},
	"MPag":  {dim: dPressure, factor: 1, exp10: 6, offset: atmosphere},

	// energy, power
	"J":      {dim: dEnergy, factor: 1, prefix: true},
	"cal":    {dim: dEnergy, factor: calTh, prefix: true},
	"cal_IT": {dim: dEnergy, factor: calIT, prefix: true},
	"Btu":    {dim: dEnergy, factor: btuIT},
	"BTU":    {dim: dEnergy, factor: btuIT},
	"Btu_IT": {dim: dEnergy, factor: btuIT},
	"MMBtu":  {dim: dEnergy, factor: btuIT, exp10: 6},
	"Wh":     {dim: dEnergy, factor: 3600, prefix: true},
	"W":      {dim: dPower, factor: 1, prefix: true},
	"hp":     {dim: dPower, factor: horsepower},

	// frequency, viscosity
	"Hz": {dim: dFreq, factor: 1, prefix: true},
	"P":  {dim: dViscous, factor: 1, exp10: -1, prefix: true}, // poise, for cP

	// dimensionless fractions
	"%":   {dim: dNone, factor: 1, exp10: -2},
	"ppm": {dim: dNone, factor: 1, exp10: -6},
	"ppb": {dim: dNone, factor: 1, exp10: -9},
}

// prefixes are the SI prefixes accepted before a unit that takes one; "da"
// comes before "d" so that "dam" is a decametre. It is read-only.
var prefixes = []struct {
	sym string
	exp int
}{
	{"Y", 24}, {"Z", 21}, {"E", 18}, {"P", 15}, {"T", 12}, {"G", 9}, {"M", 6},
	{"k", 3}, {"h", 2}, {"da", 1}, {"d", -1}, {"c", -2}, {"m", -3},
	{"u", -6}, {"µ", -6}, {"μ", -6}, {"n", -9}, {"p", -12}, {"f", -15},
	{"a", -18}, {"z", -21}, {"y", -24},
}

// hints answer common mistakes that edit distance would get wrong. It is
// read-only.
var hints = map[string][]string{
	"C":      {"degC"},
	"F":      {"degF"},
	"R":      {"degR"},
	"deg":    {"degC", "degF", "degR"},
	"degK":   {"K"},
	"°K":     {"K"},
	"sec":    {"s"},
	"secs":   {"s"},
	"hrs":    {"h"},
	"lbs":    {"lb"},
	"kgmol":  {"kmol"},
	"gmol":   {"mol"},
	"gpm":    {"gal/min"},
	"cc":     {"cm^3"},
	"Nm":     {"N*m"},
	"micron": {"um"},
	"liter":  {"L"},
	"litre":  {"L"},
	"kWhr":   {"kWh"},
}

// suggestPrefixes are tried with prefixable units when looking for the
// nearest known spelling of an unknown one.
var suggestPrefixes = []string{"k", "M", "m", "c", "u", "G"}

// scaleOf returns the SI scale of a def under an SI prefix exponent p.
func (d def) scaleOf(p int) float64 {
	if d.exp10+p == 0 {
		return d.factor
	}
	return d.factor * math.Pow10(d.exp10+p)
}
