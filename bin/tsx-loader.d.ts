/** The node options that run TypeScript sources under tsx's loader in the same process. */
export declare const TSX_LOADER_ARGS: readonly string[]
