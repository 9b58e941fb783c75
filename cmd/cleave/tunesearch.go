package main

import (
	"math"
	"runtime"
	"strconv"
	"strings"

	"github.com/cleave-seg/cleave/segment/tune"
)

// parseSpec reads a search axis as tune's flags give it: A:B:N (N values
// log-spaced from A to B, both included), a list a,b,c, a single value, or
// auto where the parameter allows it; a switch (--necks) takes on, off or
// both (on,off). Every error is a usage error naming
// the flag.
func parseSpec(d tune.Param, text string) (tune.Axis, error) {
	name := d.String()
	t := strings.TrimSpace(text)
	if d.Switch() {
		var vals []float64
		for _, s := range strings.Split(t, ",") {
			switch strings.TrimSpace(s) {
			case "on":
				vals = append(vals, tune.On)
			case "off":
				vals = append(vals, tune.Off)
			default:
				return tune.Axis{}, usagef("--%s: %q is not on or off (want on, off or on,off)", name, s)
			}
		}
		return tune.NewAxis(d, vals, text), nil
	}
	if strings.EqualFold(t, "auto") {
		if !d.CanBeAuto() {
			return tune.Axis{}, usagef("--%s cannot be auto", name)
		}
		return tune.AutoAxis(d, text), nil
	}
	allowZero := d == tune.Superpixels
	num := func(s string) (float64, error) {
		v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
		switch {
		case err != nil || math.IsNaN(v) || math.IsInf(v, 0):
			return 0, usagef("--%s: %q is not a number (want A:B:N, a list a,b,c or one value)", name, s)
		case d.Integer() && v != math.Trunc(v):
			return 0, usagef("--%s: %q is not a whole number", name, s)
		case v < 0 || (v == 0 && !allowZero):
			return 0, usagef("--%s: %q must be positive", name, s)
		}
		if lo, hi := d.Bounds(); v < lo || v > hi {
			return 0, usagef("--%s: %q is outside the range %g to %g", name, s, lo, hi)
		}
		return v, nil
	}
	var vals []float64
	if strings.Contains(t, ":") {
		parts := strings.Split(t, ":")
		if len(parts) != 3 {
			return tune.Axis{}, usagef("--%s: %q is not A:B:N", name, text)
		}
		a, err := num(parts[0])
		if err != nil {
			return tune.Axis{}, err
		}
		b, err := num(parts[1])
		if err != nil {
			return tune.Axis{}, err
		}
		n, err := strconv.Atoi(strings.TrimSpace(parts[2]))
		if err != nil || n < 1 || n > 50 {
			return tune.Axis{}, usagef("--%s: N in %q must be a whole number from 1 to 50", name, text)
		}
		if a == 0 || b == 0 {
			return tune.Axis{}, usagef("--%s: %q: log-spaced values need A and B above 0 (give 0 in a list)", name, text)
		}
		vals = tune.LogSpaced(a, b, n)
	} else {
		for _, s := range strings.Split(t, ",") {
			v, err := num(s)
			if err != nil {
				return tune.Axis{}, err
			}
			vals = append(vals, v)
		}
	}
	return tune.NewAxis(d, vals, text), nil
}

// defaultWorkers is the number of concurrent segmentations (0: GOMAXPROCS).
func defaultWorkers(n int) int {
	if n > 0 {
		return n
	}
	return runtime.GOMAXPROCS(0)
}
