package uv_test

import (
	"fmt"
	"strings"

	"deflect/uv"
)

// Reading a small table: metres converted to wavelengths with the metadata
// frequency, sigma turned into a weight, the autocorrelation excluded and
// counted.
func ExampleNewTableReader() {
	table := `# label: demo
# freq: 299792458000
u_m, v_m, re, im, sigma, flag
1.5, -2.0, 0.010, 0.002, 0.5, 0
0, 0, 1.0, 0.0, 0.5, 0
3.0, 4.0, 0.008, -0.001, 0.5, 1
`
	r, err := uv.NewTableReader(strings.NewReader(table), "demo.csv", uv.ReadOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	d, err := uv.ReadAll(r)
	if err != nil {
		fmt.Println(err)
		return
	}
	for k := range d.Len() {
		fmt.Printf("u=%g v=%g λ  V=%g%+gi Jy  weight=%g  flagged=%v\n", d.U[k], d.V[k], d.Re[k], d.Im[k], d.Weight[k], d.Flagged(k))
	}
	rep := r.Report()
	fmt.Printf("%s: %d rows, %d used, %d flagged, %d autocorrelations\n", d.Meta.Label, rep.Rows, rep.Used, rep.Flagged, rep.Autocorrelations)
	// Output:
	// u=1500 v=-2000 λ  V=0.01+0.002i Jy  weight=4  flagged=false
	// u=3000 v=4000 λ  V=0.008-0.001i Jy  weight=4  flagged=true
	// demo: 3 rows, 1 used, 1 flagged, 1 autocorrelations
}

// A bad field gives an error naming the file, line, column and value.
func ExampleParseError() {
	_, err := uv.NewTableReader(strings.NewReader("u,v,re,im,weight\n1,2,3,4,5\n"), "obs.csv", uv.ReadOptions{})
	fmt.Println(err)
	r, _ := uv.NewTableReader(strings.NewReader("u,v,re,im,weight\n1,2,1.2.3,4,5\n"), "obs.csv", uv.ReadOptions{})
	_, err = uv.ReadAll(r)
	fmt.Println(err)
	// Output:
	// <nil>
	// obs.csv:2: column "re": "1.2.3" is not a number
}
