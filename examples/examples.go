// Package examples holds the example studies; the default one is built
// into the gapbook binary so `gapbook serve` opens it without a file.
package examples

import _ "embed"

// Default is examples/default.gapbook, the study the page opens first.
//
//go:embed default.gapbook
var Default []byte
