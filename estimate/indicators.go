package estimate

import (
	"fmt"
	"sort"
)

// MarkBulk marks the fewest cells, taken by decreasing indicator, whose
// indicators sum to at least share of the total (bulk marking, Dörfler, SIAM
// J. Numer. Anal. 33 (1996)). Ties at the threshold are all marked so the
// result does not depend on the sort order.
func MarkBulk(eta []float64, share float64) ([]bool, error) {
	if !(share > 0 && share <= 1) {
		return nil, fmt.Errorf("bulk marking: the share must lie in (0, 1], got %g", share)
	}
	idx := make([]int, len(eta))
	var total float64
	for i, e := range eta {
		if !(e >= 0) {
			return nil, fmt.Errorf("bulk marking: indicator %d is %g; indicators must be non-negative numbers", i, e)
		}
		idx[i] = i
		total += e
	}
	sort.Slice(idx, func(a, b int) bool { return eta[idx[a]] > eta[idx[b]] })
	marked := make([]bool, len(eta))
	var sum, last float64
	for _, i := range idx {
		if sum >= share*total && eta[i] < last {
			break
		}
		marked[i] = true
		sum += eta[i]
		last = eta[i]
	}
	return marked, nil
}
