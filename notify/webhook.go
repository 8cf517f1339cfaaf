package notify

import "time"

// Webhook is one HTTP receiver of notifications: the settings of one entry of the
// configuration's notify.webhooks (package config embeds this type and checks it).
type Webhook struct {
	// Name identifies the webhook in logs and metrics.
	Name string `mapstructure:"name"`
	// URL is where events are POSTed (http or https).
	URL string `mapstructure:"url"`
	// LeadTime sends a "soon" event when a forecast falls below it (0: no such event).
	LeadTime time.Duration `mapstructure:"lead_time"`
	// Events selects the event kinds: reached, soon, fault (empty: all).
	Events []string `mapstructure:"events"`
}

// EventKinds are the event kinds a webhook can select (Webhook.Events).
var EventKinds = []string{string(KindReached), string(KindSoon), string(KindFault)}
