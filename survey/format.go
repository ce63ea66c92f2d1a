package survey

import (
	"math"
	"strconv"
)

var nan = math.NaN()

// formatFloat writes v with the fewest digits that read back to the same
// float64, so text output round-trips exactly.
func formatFloat(v float64) string {
	switch {
	case math.IsNaN(v):
		return "nan"
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}
