/** The project's root directory. */
export declare const ROOT: string
/** Path of ROOT/dist/NAME.mjs if it exists and is newer than every file under ROOT/src, else null (always null with TIDES_NO_BUNDLE=1). */
export declare function freshBundle(name?: string, root?: string): string | null
/** The node arguments that run the `tides` CLI as bin/tides.js does: the fresh bundle, else the sources under tsx. */
export declare function cliArgs(): string[]
