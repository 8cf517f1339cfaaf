package daq_test

import (
	"fmt"
	"time"

	"github.com/settle-lab/settle/daq"
)

// A logger that prints its clock in seconds and two channels per line, as the line
// driver reads it from a serial port (our own invented rack: a plate and a bar). Each
// field becomes a Reading; a field that is not a number is kept, raw, as a fault. A
// clock in plain seconds is anchored at the first line's arrival, so the second line,
// one logger second later, is dated one second later whenever it arrives.
func ExampleLineParser() {
	p, err := daq.NewLineParser("rack-a", daq.LineFormat{
		Separator:   ",",
		ClockColumn: 1,
		Columns:     []daq.Column{{Index: 2, Channel: "plate-1"}, {Index: 3, Channel: "bar-2"}},
	})
	if err != nil {
		fmt.Println(err)
		return
	}
	received := time.Date(2026, 12, 3, 9, 0, 0, 0, time.UTC)
	for _, line := range []string{"12.0,134.2,98.6", "13.0,133.9,----"} {
		rs, err := p.Parse([]byte(line), received)
		if err != nil {
			fmt.Println(err)
			continue
		}
		for _, r := range rs {
			if r.Status != daq.StatusOK {
				fmt.Printf("%s %s %s: %s, raw %q\n", r.Time.Format("15:04:05"), r.Logger, r.Channel, r.Status, r.Raw)
				continue
			}
			fmt.Printf("%s %s %s: %.1f °C\n", r.Time.Format("15:04:05"), r.Logger, r.Channel, r.Celsius)
		}
	}
	// Output:
	// 09:00:00 rack-a plate-1: 134.2 °C
	// 09:00:00 rack-a bar-2: 98.6 °C
	// 09:00:01 rack-a plate-1: 133.9 °C
	// 09:00:01 rack-a bar-2: unparsable, raw "----"
}
