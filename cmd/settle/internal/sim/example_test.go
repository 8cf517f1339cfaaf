package sim_test

import (
	"context"
	"os"
	"time"

	"github.com/settle-lab/settle/cmd/settle/internal/sim"
)

// Six physical seconds of the demo rack, written as fast as possible.
func ExampleRun() {
	s := sim.NewSim(sim.DemoScenario(), 2*time.Second, 1)
	_ = sim.Run(context.Background(), os.Stdout, s, sim.Options{Duration: 6 * time.Second})
	// Output:
	// # t_s,steel-cyl-a,brass-sphere-b,alu-plate-c,alumina-tile-d,rack2-ambient
	// 0.0,850.1,450.0,200.0,80.0,21.4
	// 2.0,840.4,448.7,199.5,79.6,21.5
	// 4.0,831.4,447.4,198.9,79.8,21.5
	// 6.0,822.6,446.4,198.3,79.5,21.6
}
