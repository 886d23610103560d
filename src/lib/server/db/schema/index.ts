export * from './accounts';
export * from './packs';
export * from './chargers';
export * from './sessions';
export * from './alerts';
export * from './voltage-checks';
