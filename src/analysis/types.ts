/** The analysis shape lives in shared/schemas/analysis.ts, used by server and client alike. */
export * from '@shared/schemas/analysis';
