/** All tables, one file per area. drizzle-kit reads every file in this folder. */
export * from './core';
export * from './formulas';
export * from './storage';
export * from './studies';
export * from './mail';
export * from './records';
export * from './decisions';
export * from './oos';
export * from './limits';
export * from './templates';
export * from './product-file';
export * from './photo-colour';
