package texmath_test

import (
	"fmt"

	"gapbook/notebook/texmath"
)

func ExampleMathML() {
	fmt.Println(texmath.MathML(`x_i^2 \le \frac12`, false))
	// Output: <math xmlns="http://www.w3.org/1998/Math/MathML"><msubsup><mi>x</mi><mi>i</mi><mn>2</mn></msubsup><mo>≤</mo><mfrac><mn>1</mn><mn>2</mn></mfrac></math>
}
