// Package strd holds the NIST Statistical Reference Datasets for univariate
// summary statistics (itl.nist.gov/div898/strd) as Go values, for tests in
// the data stages. Values are kept as the decimal strings NIST publishes, so
// a test can store them exactly (as integers with a scale factor) or as
// doubles, and see the difference.
//
// Certified values (mean; s with denominator n-1) are those published by
// NIST and restated in the project's reference-values.md (status:
// confirmed and recomputed). NumAcc sets after Simon & Lesage (1989),
// Computational Statistics & Data Analysis 8, 325-332.
package strd

// Set is one dataset with its certified statistics.
type Set struct {
	Name string
	// Values are decimal literals exactly as published.
	Values []string
	// Decimals is the number of decimal places of every value, so that
	// value * 10^Decimals is an integer.
	Decimals int
	Mean     float64 // certified sample mean
	Std      float64 // certified sample standard deviation (n-1)
}

// Sets lists the six univariate sets in NIST's order of difficulty.
func Sets() []Set {
	return []Set{
		{Name: "NumAcc1", Values: []string{"10000001", "10000003", "10000002"}, Decimals: 0,
			Mean: 10000002, Std: 1},
		numAcc("NumAcc2", "1.2", "1.1", "1.3", 1.2),
		numAcc("NumAcc3", "1000000.2", "1000000.1", "1000000.3", 1000000.2),
		numAcc("NumAcc4", "10000000.2", "10000000.1", "10000000.3", 10000000.2),
		{Name: "Michelso", Values: michelso, Decimals: 2,
			Mean: 299.852400000000, Std: 0.0790105478190518},
		{Name: "Lew", Values: lew, Decimals: 0,
			Mean: -177.435000000000, Std: 277.332168044316},
	}
}

// numAcc builds NumAcc2-4: the centre value, then 500 pairs (lo, hi).
func numAcc(name, centre, lo, hi string, mean float64) Set {
	v := []string{centre}
	for i := 0; i < 500; i++ {
		v = append(v, lo, hi)
	}
	return Set{Name: name, Values: v, Decimals: 1, Mean: mean, Std: 0.1}
}

// michelso: NIST StRD "Michelso" (Dorsey 1944, Table 22), 100 values.
var michelso = []string{
	"299.85", "299.74", "299.90", "300.07", "299.93", "299.85", "299.95", "299.98", "299.98", "299.88",
	"300.00", "299.98", "299.93", "299.65", "299.76", "299.81", "300.00", "300.00", "299.96", "299.96",
	"299.96", "299.94", "299.96", "299.94", "299.88", "299.80", "299.85", "299.88", "299.90", "299.84",
	"299.83", "299.79", "299.81", "299.88", "299.88", "299.83", "299.80", "299.79", "299.76", "299.80",
	"299.88", "299.88", "299.88", "299.86", "299.72", "299.72", "299.62", "299.86", "299.97", "299.95",
	"299.88", "299.91", "299.85", "299.87", "299.84", "299.84", "299.85", "299.84", "299.84", "299.84",
	"299.89", "299.81", "299.81", "299.82", "299.80", "299.77", "299.76", "299.74", "299.75", "299.76",
	"299.91", "299.92", "299.89", "299.86", "299.88", "299.72", "299.84", "299.85", "299.85", "299.78",
	"299.89", "299.84", "299.78", "299.81", "299.76", "299.81", "299.79", "299.81", "299.82", "299.85",
	"299.87", "299.87", "299.81", "299.74", "299.81", "299.94", "299.95", "299.80", "299.81", "299.87",
}

// lew: NIST StRD "Lew", 200 values.
var lew = []string{
	"-213", "-564", "-35", "-15", "141", "115", "-420", "-360", "203", "-338",
	"-431", "194", "-220", "-513", "154", "-125", "-559", "92", "-21", "-579",
	"-52", "99", "-543", "-175", "162", "-457", "-346", "204", "-300", "-474",
	"164", "-107", "-572", "-8", "83", "-541", "-224", "180", "-420", "-374",
	"201", "-236", "-531", "83", "27", "-564", "-112", "131", "-507", "-254",
	"199", "-311", "-495", "143", "-46", "-579", "-90", "136", "-472", "-338",
	"202", "-287", "-477", "169", "-124", "-568", "17", "48", "-568", "-135",
	"162", "-430", "-422", "172", "-74", "-577", "-13", "92", "-534", "-243",
	"194", "-355", "-465", "156", "-81", "-578", "-64", "139", "-449", "-384",
	"193", "-198", "-538", "110", "-44", "-577", "-6", "66", "-552", "-164",
	"161", "-460", "-344", "205", "-281", "-504", "134", "-28", "-576", "-118",
	"156", "-437", "-381", "200", "-220", "-540", "83", "11", "-568", "-160",
	"172", "-414", "-408", "188", "-125", "-572", "-32", "139", "-492", "-321",
	"205", "-262", "-504", "142", "-83", "-574", "0", "48", "-571", "-106",
	"137", "-501", "-266", "190", "-391", "-406", "194", "-186", "-553", "83",
	"-13", "-577", "-49", "103", "-515", "-280", "201", "300", "-506", "131",
	"-45", "-578", "-80", "138", "-462", "-361", "201", "-211", "-554", "32",
	"74", "-533", "-235", "187", "-372", "-442", "182", "-147", "-566", "25",
	"68", "-535", "-244", "194", "-351", "-463", "174", "-125", "-570", "15",
	"72", "-550", "-190", "172", "-424", "-385", "198", "-218", "-536", "96",
}
