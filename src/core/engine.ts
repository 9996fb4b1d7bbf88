/**
 * The name and version of the engine, as every ledger records it (`engine`). It names the
 * arithmetic a ledger's numbers came from: bump it whenever a change can alter a trajectory's
 * bits (a new elementary function, another order of additions), so `stepwell verify` can say
 * that a replay differs because the engine changed.
 */
export const ENGINE_NAME = 'stepwell 0.2.0';
