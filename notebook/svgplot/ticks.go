package svgplot

import (
	"math"
	"strconv"
	"strings"
)

// tick is one labelled position on an axis.
type tick struct {
	v     float64 // data value (for log axes, the value itself, not its log)
	label string  // plain label; for log axes the exponent when sup is set
	sup   bool    // label is an exponent k, drawn as 10^k
	minor bool    // unlabelled minor tick
}

// niceStep returns the step among 1, 2, 5 × 10^k closest above span/n:
// the usual choice for readable linear ticks (common practice, no source).
func niceStep(span float64, n int) float64 {
	raw := span / float64(n)
	e := math.Floor(math.Log10(raw))
	base := math.Pow(10, e)
	for _, m := range []float64{1, 2, 5, 10} {
		if m*base >= raw*(1-1e-9) {
			return m * base
		}
	}
	return 10 * base
}

// linearTicks returns ticks covering [lo, hi] at a 1-2-5 step, about n
// intervals, and the range widened to the outer ticks. Values are k·step
// with integer k, so labels come out exact.
func linearTicks(lo, hi float64, n int) (ticks []tick, a, b float64) {
	if !(hi > lo) {
		d := math.Abs(lo) * 0.1
		if d == 0 || math.IsNaN(d) || math.IsInf(d, 0) {
			d = 1
		}
		lo, hi = lo-d, hi+d
	}
	step := niceStep(hi-lo, n)
	k0 := math.Floor(lo/step + 1e-9)
	k1 := math.Ceil(hi/step - 1e-9)
	for k := k0; k <= k1; k++ {
		v := k * step
		ticks = append(ticks, tick{v: v, label: formatTick(v, step)})
	}
	return ticks, k0 * step, k1 * step
}

// insideTicks returns 1-2-5 ticks inside [lo, hi] without widening it,
// for colour bars whose ends are the data range.
func insideTicks(lo, hi float64, n int) []tick {
	if !(hi > lo) {
		return []tick{{v: lo, label: formatTick(lo, math.Abs(lo)/10)}}
	}
	step := niceStep(hi-lo, n)
	var ticks []tick
	for k := math.Ceil(lo/step - 1e-9); k*step <= hi*(1+1e-12)+1e-300; k++ {
		v := k * step
		ticks = append(ticks, tick{v: v, label: formatTick(v, step)})
	}
	return ticks
}

// logTicks returns decade ticks covering [lo, hi] (both > 0), the range
// widened to whole decades, and minor ticks at 2..9 when few decades show.
func logTicks(lo, hi float64) (ticks []tick, a, b float64) {
	e0 := math.Floor(math.Log10(lo) + 1e-9)
	e1 := math.Ceil(math.Log10(hi) - 1e-9)
	if e1 <= e0 {
		e1 = e0 + 1
	}
	every := math.Ceil((e1 - e0) / 8)
	for e := e0; e <= e1; e++ {
		d := math.Pow(10, e)
		if math.Mod(e-e0, every) == 0 {
			ticks = append(ticks, tick{v: d, label: strconv.Itoa(int(e)), sup: true})
		} else {
			ticks = append(ticks, tick{v: d, minor: true})
		}
		if every == 1 && e1-e0 <= 8 && e < e1 {
			for m := 2.0; m <= 9; m++ {
				ticks = append(ticks, tick{v: m * d, minor: true})
			}
		}
	}
	return ticks, math.Pow(10, e0), math.Pow(10, e1)
}

// formatTick writes v, a multiple of step, compactly: plain decimals for
// moderate magnitudes, otherwise mantissa and exponent as in 2.5e-7.
// Negative numbers use the minus sign U+2212.
func formatTick(v, step float64) string {
	if v == 0 || math.Abs(v) < step*1e-9 {
		return "0"
	}
	av := math.Abs(v)
	var s string
	if av >= 1e-3 && av < 1e5 && step >= 1e-4 {
		dec := 0
		if step < 1 {
			dec = int(math.Ceil(-math.Log10(step) - 1e-9))
		}
		s = strconv.FormatFloat(v, 'f', dec, 64)
	} else {
		prec := int(math.Floor(math.Log10(av)+1e-9) - math.Floor(math.Log10(step)+1e-9))
		if prec < 0 {
			prec = 0
		}
		s = compactExp(strconv.FormatFloat(v, 'e', prec, 64))
	}
	return strings.Replace(s, "-", "\u2212", -1)
}

// compactExp turns 2.50e-07 into 2.5e-7.
func compactExp(s string) string {
	mant, exp, ok := strings.Cut(s, "e")
	if !ok {
		return s
	}
	if strings.Contains(mant, ".") {
		mant = strings.TrimRight(strings.TrimRight(mant, "0"), ".")
	}
	sign := ""
	if exp[0] == '-' {
		sign = "-"
	}
	exp = strings.TrimLeft(exp[1:], "0")
	if exp == "" {
		exp = "0"
	}
	return mant + "e" + sign + exp
}
