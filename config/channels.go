package config

// ChannelLoggers maps each channel a logger reads (the columns or registers of its
// sections: daq.Logger.Channels) to the logger's name, so a channel that has never had
// a reading can still be tied to its logger's port.
func (c *Config) ChannelLoggers() map[string]string {
	out := map[string]string{}
	for _, l := range c.Loggers {
		for _, ch := range l.Channels() {
			out[ch] = l.Name
		}
	}
	return out
}
