declare module 'express-mysql-session' {
  import type session from 'express-session';
  interface Options {
    clearExpired?: boolean;
    checkExpirationInterval?: number;
    expiration?: number;
    createDatabaseTable?: boolean;
    endConnectionOnClose?: boolean;
    disableTouch?: boolean;
  }
  interface MySQLStoreClass {
    new (options: Options, connection?: unknown): session.Store & { close(): Promise<void>; onReady(): Promise<void> };
  }
  export default function factory(s: typeof session): MySQLStoreClass;
}
