/**
 * The one papaparse call the reader makes, declared here: the package's own type declarations pull in Node's
 * stream types, which the pure core must not see. Importing the file path `papaparse/papaparse.js` uses these.
 */
declare module 'papaparse/papaparse.js' {
  interface PapaError { type: string; code: string; message: string; row?: number; index?: number }
  interface PapaResult { data: string[][]; errors: PapaError[] }
  interface PapaConfig { delimiter?: string; quoteChar?: string; skipEmptyLines?: boolean; header?: false }
  const Papa: { parse(input: string, config: PapaConfig): PapaResult };
  export default Papa;
}
