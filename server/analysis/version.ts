/** Engine version carried by every result; bump on any change that can move a figure. */
export const ENGINE_VERSION = '1.3.0'
