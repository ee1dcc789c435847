package compare_test

import (
	"fmt"
	"strings"

	"tandem/compare"
	"tandem/compare/table"
)

// Two chains share a luminosity uncertainty (ρ = 1, it cancels) and have
// correlated statistical errors (ρ = 0.5, from their event overlap). By
// hand: σ_d = √(10² + 10² - 2·0.5·10·10) = 10 in bin 1, so its pull is
// -4/10; χ² = 0.16 + 1/9 + 1/16; the largest-pull p-value is
// 1 - (1 - erfc(0.4/√2))³ = 0.970.
func ExampleColumns() {
	a, _ := table.ParseCSV("heron.csv", []byte(strings.Join([]string{
		"lo,hi,rate,stat,lumi",
		"0,1,100,10,5",
		"1,2,80,9,4",
		"2,3,64,8,3.2",
	}, "\n")), table.CSVOptions{})
	b, _ := table.ParseCSV("otter.csv", []byte(strings.Join([]string{
		"lo,hi,rate,stat,lumi",
		"0,1,104,10,5",
		"1,2,77,9,4",
		"2,3,66,8,3.2",
	}, "\n")), table.CSVOptions{})
	opt := compare.Defaults()
	opt.Correlations = map[string]compare.Rho{"stat": compare.Number(0.5), "lumi": compare.Number(1)}
	rs, err := compare.Columns(a, b, []compare.Selection{{Value: "rate", Errors: []string{"stat", "lumi"}}}, opt)
	if err != nil {
		fmt.Println(err)
		return
	}
	r := rs[0]
	fmt.Printf("pulls %.3f %.3f %.3f, χ² = %.3f for %d bins\n", r.Pulls[0], r.Pulls[1], r.Pulls[2], r.Chi2, r.NDF)
	for _, s := range r.Sources {
		fmt.Printf("source %s: ρ = %g, share of σ_d² %.2f\n", s.Name, s.Rho, s.Share)
	}
	for _, c := range r.Criteria {
		if c.Adjusted != nil {
			fmt.Printf("%s: p = %.3f, adjusted %.3f, pass %v\n", c.Name, c.Value, *c.Adjusted, c.Pass)
		}
	}
	// Output:
	// pulls -0.400 0.333 -0.250, χ² = 0.334 for 3 bins
	// source stat: ρ = 0.5, share of σ_d² 1.00
	// source lumi: ρ = 1, share of σ_d² 0.00
	// chi2 p-value: p = 0.954, adjusted 1.000, pass true
	// KS p-value: p = 0.679, adjusted 1.000, pass true
	// runs p-value: p = 1.000, adjusted 1.000, pass true
	// max-pull p-value: p = 0.970, adjusted 1.000, pass true
}
