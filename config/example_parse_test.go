package config_test

import (
	"fmt"

	"github.com/settle-lab/settle/config"
)

// Parse reads a configuration as the daemon does: defaults filled, unknown keys
// refused, every problem reported at once with its line and key path. A valid file
// then becomes the engine's channel specs (ChannelSpecs), the one place where the
// file's channels, targets and specimens turn into predict's types. Our own invented
// rack: one logger, a room sensor and a plate.
func ExampleParse() {
	const rack = `
loggers:
  - name: rack-a
    port: /dev/ttyUSB0
    line:
      columns:
        - {index: 1, channel: room}
        - {index: 2, channel: plate-1}
channels:
  - name: room
  - name: plate-1
    ambient: room
    targets:
      - {name: handle, celsius: 50, handling: true}
      - {name: settled, within: 2}
`
	c, err := config.Parse("rack.yaml", []byte(rack))
	if err != nil {
		fmt.Println(err)
		return
	}
	specs, err := config.ChannelSpecs(c.Channels)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, s := range specs {
		fmt.Printf("%s (ambient %q): %d targets\n", s.Name, s.Ambient, len(s.Targets))
	}
	fmt.Println("listen", c.Listen)

	_, err = config.Parse("typo.yaml", []byte("listen: 127.0.0.1:8391\nlogers: []\n"))
	fmt.Println(err)
	// Output:
	// room (ambient ""): 0 targets
	// plate-1 (ambient "room"): 2 targets
	// listen 127.0.0.1:8391
	// typo.yaml: line 2: unknown key "logers" (known keys here: channels, data_dir, display, http, journal, listen, loggers, notify)
	// typo.yaml: loggers: at least one logger is needed
	// typo.yaml: channels: at least one channel is needed
}
