// Package notify sends settle's notifications to webhooks: a JSON POST when a target
// is reached, when a forecast falls below a webhook's lead time, and when a channel
// faults (open thermocouple, stale data, lost port).
//
// Each webhook's settings are a Webhook (the configuration's notify.webhooks embeds
// this type). On each poll the daemon's handler builds a Channel from each of the
// engine's channel states (predict.ChannelState, with the channel's newest reading and
// fault) and calls Observe, which turns changes into events, drops any event the
// webhook has already been sent (the key is channel, target, kind and segment), and
// queues the rest. Run delivers the queue with retries and exponential backoff,
// counting what was sent and what failed in settle_notify_sent_total and
// settle_notify_failures_total.
//
// Deduplication lives in memory: a daemon restart may repeat an event once. Each POST
// carries the event's id (also in the X-Settle-Event-Id header), so a receiver can
// drop repeats, including those a retry after a lost response produces.
package notify
