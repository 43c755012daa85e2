/** Reported in meta.version; bump with package.json. */
export const VERSION = '0.1.0';
