// d3 (pinned by package-lock.json) is loaded as its UMD build by index.html; its ES module file re-exports the separate
// d3-* packages by bare names, which a browser cannot resolve without a bundler.
export const d3 = globalThis.d3;
if (!d3) throw new Error('d3 did not load (lib/d3/d3.min.js)');
