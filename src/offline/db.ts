/** The device's offline store in IndexedDB (through idb): the copy of the Bench and its sheets, and the outbox. */
import { openDB, type DBSchema, type IDBPDatabase } from 'idb';
import type { OfflineCopy, RecordEntry, RecordSheet } from '@shared/schemas/records';

export interface OutboxConflict {
  studyAttributeId: number;
  name: string;
  /** The value kept on this device, as sent, and in words. */
  entry: RecordEntry;
  mine: string;
  /** What the server has, recorded meanwhile by someone else. */
  theirs: string;
  theirsBy: string;
  observationId: number;
}

export interface OutboxEntry {
  seq?: number;
  /** Made on the device (crypto.randomUUID): the server keeps each save once under it. */
  clientId: string;
  kind: 'reading' | 'photo';
  labId: number;
  userId: number;
  userName: string;
  code: string;
  checkpointId: number;
  checkpointLabel: string;
  entries?: RecordEntry[];
  allowEarly?: boolean;
  photo?: { blob: Blob; name: string; type: string; size: number };
  /** When it was recorded, by the device's clock. */
  deviceRecordedAt: string;
  /** waiting: to send; refused: the server said no (reason kept); conflict: recorded meanwhile by someone else. */
  state: 'waiting' | 'refused' | 'conflict';
  reason?: string;
  conflicts?: OutboxConflict[];
}

interface Schema extends DBSchema {
  copy: { key: string; value: { key: string; at: string; bench?: OfflineCopy['bench']; left?: number; sheet?: RecordSheet } };
  outbox: { key: number; value: OutboxEntry; indexes: { byMember: [number, number] } };
}

let db: Promise<IDBPDatabase<Schema>> | null = null;
export function offlineDb(): Promise<IDBPDatabase<Schema>> {
  return (db ??= openDB<Schema>('keepwell-offline', 1, {
    upgrade(d) {
      d.createObjectStore('copy', { keyPath: 'key' });
      const out = d.createObjectStore('outbox', { keyPath: 'seq', autoIncrement: true });
      out.createIndex('byMember', ['labId', 'userId']);
    },
  }));
}

export const benchKey = (labId: number, userId: number) => `bench:${labId}:${userId}`;
export const sheetKey = (labId: number, code: string, checkpointId: number) => `sheet:${labId}:${code.toUpperCase()}:${checkpointId}`;
