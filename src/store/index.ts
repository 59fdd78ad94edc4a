// The local library's public surface.
export * from './records';
export * from './schema';
export * from './library';
export * from './exchange';
export * from './bytes';
export * from './thumbnail';
export * from './history';
