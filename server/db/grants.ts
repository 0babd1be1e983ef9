/**
 * Least privilege for the app's database account: read and write on every
 * table, except the audit trail, which it may only read and append to.
 * Run after migrations with a privileged connection (the launcher does this;
 * for an external server, DEVELOPERS.md lists the same grants).
 */
import mysql from 'mysql2/promise';
import type { ConnectionTarget } from './mariadb';

/** History tables: rows are added, never changed or removed. */
export const APPEND_ONLY_TABLES = ['audit_log', 'observation_revisions'];

export async function grantAppAccount(admin: ConnectionTarget, appUser: string): Promise<void> {
  const conn = await mysql.createConnection({ ...admin, multipleStatements: false });
  try {
    const [rows] = await conn.query<mysql.RowDataPacket[]>(
      'SELECT table_name AS t FROM information_schema.tables WHERE table_schema = ?',
      [admin.database],
    );
    for (const host of ['127.0.0.1', 'localhost']) {
      const who = `'${appUser}'@'${host}'`;
      for (const { t } of rows) {
        const privileges = APPEND_ONLY_TABLES.includes(t) ? 'SELECT, INSERT' : 'SELECT, INSERT, UPDATE, DELETE';
        await conn.query(`GRANT ${privileges} ON \`${admin.database}\`.\`${t}\` TO ${who}`);
      }
    }
  } finally {
    await conn.end();
  }
}
