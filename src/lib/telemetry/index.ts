/** The packet codec of the telemetry contract: pure, bytes in and typed records or reasons out. */

export * from './types';
export * from './layout';
export { readPrimaryHeader, writePrimaryHeader } from './header';
export type { PrimaryHeader } from './header';
export { crc16 } from './crc16';
export { cucToIso, cucToUnixMs, cucToUnixSeconds, timeTag, unixMsToCuc } from './cuc';
export { encodeIdlePacket, encodePacket, encodePacketInto, packetLength } from './encode';
export { PacketStreamDecoder, decodeBuffer } from './decode';
export type { DecodeContext, PacketVisitor } from './decode';
