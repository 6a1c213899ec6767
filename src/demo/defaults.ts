/** The demo server's port on 127.0.0.1 when none is given. */
export const DEFAULT_DEMO_PORT = 8765;
