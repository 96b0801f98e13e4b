//go:build gapbooktest

package main

// Browser tests build the worker with -tags gapbooktest to get kinds that
// compute something (and one that runs until cancelled) before the
// numerical kinds exist. Production builds never include them.
import _ "gapbook/web/testkinds"
