/** The instrument-link half of shared/protocol: framing, parsing, SCPI, SPI hex, profiles. */
export * from './reading';
export * from './framing';
export * from './parse';
export * from './hex';
export * from './scpi';
export * from './linkProfile';
