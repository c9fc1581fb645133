package sweepcmd

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/loopwright/loopwright/interact"
	"github.com/loopwright/loopwright/interact/sweep"
	"github.com/loopwright/loopwright/model"
)

// parseAxis reads an --axis flag, NAME=FROM:TO:POINTS[:log]. FROM and TO
// are numbers in the parameter's declared unit, or "number unit" to
// convert ("F=0.9 kmol/min:1.1 kmol/min:5").
func parseAxis(sys *model.System, spec string) (sweep.Axis, error) {
	bad := func(format string, a ...any) (sweep.Axis, error) {
		return sweep.Axis{}, fmt.Errorf("--axis %q: %s; write NAME=FROM:TO:POINTS[:log], for example --axis \"F=0.9 kmol/min:1.1 kmol/min:5\"", spec, fmt.Sprintf(format, a...))
	}
	name, rest, ok := strings.Cut(spec, "=")
	name = strings.TrimSpace(name)
	if !ok || name == "" {
		return bad("no NAME= before the range")
	}
	parts := strings.Split(rest, ":")
	if len(parts) < 3 || len(parts) > 4 {
		return bad("%d fields after the name, want 3 or 4", len(parts))
	}
	role, k, found := sys.Lookup(name)
	if !found {
		return bad("the model has no parameter, input or disturbance %s", name)
	}
	if role == model.RoleUnknown {
		return bad("%s is an unknown the solver finds; an axis must be a parameter, input or disturbance", name)
	}
	from, err := valueOf(sys, k, parts[0])
	if err != nil {
		return bad("FROM: %v", err)
	}
	to, err := valueOf(sys, k, parts[1])
	if err != nil {
		return bad("TO: %v", err)
	}
	n, err := strconv.Atoi(strings.TrimSpace(parts[2]))
	if err != nil || n < 1 {
		return bad("POINTS %q is not a whole number of at least 1", parts[2])
	}
	log := false
	if len(parts) == 4 {
		switch strings.TrimSpace(parts[3]) {
		case "log":
			log = true
		case "lin", "":
		default:
			return bad("the fourth field is %q: only log (or lin) may stand there", parts[3])
		}
	}
	a := sweep.AxisFor(sys, k, from, to, n, log)
	if err := a.Check(); err != nil {
		return bad("%v", err)
	}
	return a, nil
}

// valueOf converts text to SI for parameter slot k using the model's own
// conversion (with its unit checks), leaving the parameter as it was.
func valueOf(sys *model.System, k int, text string) (float64, error) {
	sym := &sys.Params[k]
	old := sym.Value
	defer func() { sym.Value = old }()
	if err := sys.SetValue(sym.Name, strings.TrimSpace(text)); err != nil {
		return 0, err
	}
	return sym.Value, nil
}

// parsePairing reads a --pair flag, "OUT:IN OUT:IN" (commas also separate).
func parsePairing(sys *model.System, spec string) (interact.Pairing, error) {
	outs := map[string]int{}
	for i, o := range sys.Outputs {
		outs[o.Name] = i
	}
	ins := map[string]int{}
	for j, k := range sys.Inputs {
		ins[sys.Params[k].Name] = j
	}
	p := make(interact.Pairing, len(sys.Outputs))
	for i := range p {
		p[i] = -1
	}
	used := map[int]bool{}
	for _, f := range strings.FieldsFunc(spec, func(r rune) bool { return r == ',' || r == ' ' }) {
		o, in, ok := strings.Cut(f, ":")
		i, oko := outs[o]
		j, oki := ins[in]
		switch {
		case !ok:
			return nil, fmt.Errorf("--pair %q: %q is not OUTPUT:INPUT", spec, f)
		case !oko:
			return nil, fmt.Errorf("--pair %q: no output %q in the model", spec, o)
		case !oki:
			return nil, fmt.Errorf("--pair %q: no input %q in the model", spec, in)
		case p[i] >= 0 || used[j]:
			return nil, fmt.Errorf("--pair %q: %s or %s is paired twice", spec, o, in)
		}
		p[i], used[j] = j, true
	}
	for i, j := range p {
		if j < 0 {
			return nil, fmt.Errorf("--pair %q: output %s has no input", spec, sys.Outputs[i].Name)
		}
	}
	return p, nil
}

// parseShard reads K/N.
func parseShard(s string) (sweep.Shard, error) {
	if s == "" {
		return sweep.Shard{}, nil
	}
	k, n, ok := strings.Cut(s, "/")
	kk, err1 := strconv.Atoi(k)
	nn, err2 := strconv.Atoi(n)
	if !ok || err1 != nil || err2 != nil || nn < 1 || kk < 0 || kk >= nn {
		return sweep.Shard{}, fmt.Errorf("--shard %q: write K/N with 0 <= K < N, for example --shard 3/8", s)
	}
	return sweep.Shard{K: kk, N: nn}, nil
}
