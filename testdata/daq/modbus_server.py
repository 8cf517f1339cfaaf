#!/usr/bin/python3
"""An independent Modbus RTU server for settle's Modbus client test.

Usage: modbus_server.py PORT

Serves device address 3 on the serial device PORT with pymodbus (Debian's
python3-pymodbus, written against 3.0.0) and the registers below, which
daq/modbussource_test.go expects. Prints "ready" on stdout once the port is open.
Addresses are 0-based on the wire (zero_mode=True).
"""
import asyncio
import struct
import sys

from pymodbus.datastore import (
    ModbusSequentialDataBlock,
    ModbusServerContext,
    ModbusSlaveContext,
)
from pymodbus.framer.rtu_framer import ModbusRtuFramer
from pymodbus.server import StartAsyncSerialServer


def float32_words(value):
    """Return the high and low 16-bit words of an IEEE 754 single."""
    hi, lo = struct.unpack(">HH", struct.pack(">f", value))
    return [hi, lo]


def int32_low_first(value):
    """Return the low and high words of a signed 32-bit value (word-swapped)."""
    hi, lo = struct.unpack(">HH", struct.pack(">i", value))
    return [lo, hi]


HOLDING = (
    [2153]                       # 0: int16, scale 0.1 -> 215.3
    + [struct.unpack(">H", struct.pack(">h", -45))[0]]  # 1: int16 -45 -> -4.5 with scale 0.1
    + float32_words(21.5)        # 2-3: float32, high word first
    + int32_low_first(-123456)   # 4-5: int32, low word first, scale 0.001 -> -123.456
)
INPUT = [
    3096,   # 0: thermocouple type K EMF in microvolts, scale 0.001 -> 3.096 mV
    32767,  # 1: the module's open-circuit rail
    250,    # 2: cold junction, scale 0.1 -> 25.0 C
]


async def main(port):
    store = ModbusSlaveContext(
        hr=ModbusSequentialDataBlock(0, HOLDING),
        ir=ModbusSequentialDataBlock(0, INPUT),
        zero_mode=True,
    )
    context = ModbusServerContext(slaves={3: store}, single=False)
    server = await StartAsyncSerialServer(
        context=context,
        framer=ModbusRtuFramer,
        port=port,
        baudrate=19200,
        parity="N",  # a pseudo-terminal refuses parity settings (EINVAL)
        stopbits=1,
        bytesize=8,
        timeout=0.05,
        defer_start=True,
    )
    await server.start()
    if server.transport is None:
        print(f"cannot open {port}", file=sys.stderr, flush=True)
        sys.exit(2)
    print("ready", flush=True)
    await server.serve_forever()


if __name__ == "__main__":
    asyncio.run(main(sys.argv[1]))
