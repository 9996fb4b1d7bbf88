/**
 * plotly.js-basic-dist-min (scatter, bar and pie traces: all the figures need) ships no
 * types of its own; its API is plotly.js's, typed by @types/plotly.js.
 */
declare module 'plotly.js-basic-dist-min' {
  import * as Plotly from 'plotly.js';
  export default Plotly;
}
