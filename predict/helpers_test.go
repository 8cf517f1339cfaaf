package predict

import (
	"encoding/csv"
	"os"
	"strconv"
	"testing"
)

// readRumford reads testdata/predict/rumford.csv: minutes and °F.
func readRumford(t *testing.T) (minutes, fahrenheit []float64) {
	t.Helper()
	f, err := os.Open("../testdata/predict/rumford.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.Comment = '#'
	rows, err := r.ReadAll()
	if err != nil {
		t.Fatalf("rumford.csv: %v", err)
	}
	for i, row := range rows {
		m, err1 := strconv.ParseFloat(row[0], 64)
		temp, err2 := strconv.ParseFloat(row[1], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("rumford.csv row %d: %v %v", i+1, err1, err2)
		}
		minutes, fahrenheit = append(minutes, m), append(fahrenheit, temp)
	}
	return minutes, fahrenheit
}

// readMug reads shared/realdata/mug-water-cooling.csv: minutes and °C. It skips the
// test when the shared folder is absent (a plain clone).
func readMug(t *testing.T) (minutes, celsius []float64) {
	t.Helper()
	const path = "../../shared/realdata/mug-water-cooling.csv"
	f, err := os.Open(path)
	if os.IsNotExist(err) {
		t.Skipf("%s absent (a plain clone has no shared folder)", path)
	}
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	for i, row := range rows[1:] {
		m, err1 := strconv.ParseFloat(row[1], 64)
		c, err2 := strconv.ParseFloat(row[2], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("%s row %d: %v %v", path, i+2, err1, err2)
		}
		minutes, celsius = append(minutes, m), append(celsius, c)
	}
	return minutes, celsius
}
