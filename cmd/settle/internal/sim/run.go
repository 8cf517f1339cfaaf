package sim

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"time"
)

// Options control Run.
type Options struct {
	// Speed is the time-lapse factor: physical seconds of logger clock per wall second.
	// Zero or negative writes as fast as possible (for tests and files).
	Speed float64
	// Duration bounds the physical time written (logger clock after the first line);
	// zero means until ctx ends or the stream is done.
	Duration time.Duration

	// now and sleep replace the wall clock in tests; nil means the real ones.
	now   func() time.Time
	sleep func(ctx context.Context, d time.Duration) error
}

// Run writes a '#' header naming the columns and then one line per sample of src, each
// paced so that it leaves at start + (clock − first clock)/Speed of wall time. If the
// clock goes backwards (a replay of a restarted logger) the pacing starts afresh. Run
// returns nil when ctx ends, the stream ends or Duration is reached, and an error if
// writing or reading fails.
func Run(ctx context.Context, w io.Writer, src Lines, opt Options) error {
	now, sleep := opt.now, opt.sleep
	if now == nil {
		now = time.Now
	}
	if sleep == nil {
		sleep = sleepCtx
	}
	if _, err := io.WriteString(w, "# t_s,"+strings.Join(src.Columns(), ",")+"\n"); err != nil {
		return fmt.Errorf("sim: write header: %w", err)
	}
	var (
		buf          []byte
		start        time.Time
		first, prev  float64
		begun        bool
		limitSeconds = opt.Duration.Seconds()
	)
	for ctx.Err() == nil {
		smp, err := src.Next()
		if errors.Is(err, io.EOF) {
			return nil
		}
		if err != nil {
			return fmt.Errorf("sim: %w", err)
		}
		if !begun || smp.Clock < prev {
			start, first, begun = now(), smp.Clock, true
		}
		prev = smp.Clock
		if limitSeconds > 0 && smp.Clock-first > limitSeconds {
			return nil
		}
		if opt.Speed > 0 {
			due := start.Add(time.Duration((smp.Clock - first) / opt.Speed * float64(time.Second)))
			if err := sleep(ctx, due.Sub(now())); err != nil {
				return nil // ctx ended while waiting
			}
		}
		buf = AppendLine(buf[:0], smp)
		if _, err := w.Write(buf); err != nil {
			return fmt.Errorf("sim: write line at clock %.1f s: %w", smp.Clock, err)
		}
	}
	return nil
}

// AppendLine formats a sample as the logger does: clock and values with one decimal,
// comma-separated, an empty field for a missing value, and a newline.
func AppendLine(buf []byte, s Sample) []byte {
	buf = strconv.AppendFloat(buf, s.Clock, 'f', 1, 64)
	for _, v := range s.Values {
		buf = append(buf, ',')
		if !math.IsNaN(v) {
			buf = strconv.AppendFloat(buf, v, 'f', 1, 64)
		}
	}
	return append(buf, '\n')
}

// sleepCtx waits for d or until ctx ends (then returning ctx.Err()).
func sleepCtx(ctx context.Context, d time.Duration) error {
	if d <= 0 {
		return ctx.Err()
	}
	t := time.NewTimer(d)
	defer t.Stop()
	select {
	case <-ctx.Done():
		return ctx.Err()
	case <-t.C:
		return nil
	}
}
