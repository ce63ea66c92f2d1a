package region_test

import (
	"fmt"
	"strings"

	"github.com/filigree-survey/filigree/mask/region"
)

func ExampleParse() {
	const text = `
# a field of 1.5° radius, 90 % complete, with a bright-star hole
include cap centre=150,2.2 radius=1.5 completeness=0.9
exclude cap centre=150.4,2.0 radius=0.1
`
	reg, err := region.Parse("field.reg", strings.NewReader(text))
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(reg.Contains(150, 2.2), reg.Contains(150.4, 2.0), reg.Completeness(149, 2))
	m := reg.Measure()
	fmt.Printf("area %.2f deg², effective %.2f deg², error ≤ %.3f deg²\n", m.Area, m.EffectiveArea, m.MaxError)

	_, err = region.Parse("bad.reg", strings.NewReader("include cap centre=150,2 radius=200"))
	fmt.Println(err)
	// Output:
	// true false 0.9
	// area 7.04 deg², effective 6.33 deg², error ≤ 0.015 deg²
	// bad.reg: line 1: column 33: radius must be in (0, 180] degrees, got 200
}
