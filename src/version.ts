/** Tool version, kept equal to package.json's (checked by a test). */
export const VERSION = '0.1.0';
export const TOOL = { name: 'kerneldx' as const, version: VERSION };
