import { parseConfig } from './src/config/load-config.js';
import { linkScale } from './src/bench/link-scale.js';
const t0 = performance.now();
console.log(linkScale(parseConfig({}), [10_000, 100_000, 1_000_000]), ((performance.now()-t0)/1000).toFixed(1), 's');
