package config

// ChannelLoggers maps each channel a logger reads (line or query columns, Modbus
// registers) to the logger's name, so a channel that has never had a reading can still
// be tied to its logger's port.
func (c *Config) ChannelLoggers() map[string]string {
	out := map[string]string{}
	for _, l := range c.Loggers {
		for _, col := range l.Line.Columns {
			out[col.Channel] = l.Name
		}
		for _, col := range l.Query.Columns {
			out[col.Channel] = l.Name
		}
		for _, r := range l.Modbus.Registers {
			out[r.Channel] = l.Name
		}
	}
	return out
}
