/**
 * Generates the invented data of the lake-chlorophyll demo. Every lake, name and number here is
 * made up; the shape of the response (saturating in phosphorus, faster growth in warm water, a
 * lasting offset per lake) is chosen to give tree models something to find.
 *
 * Run: npx tsx recipes/lake-chlorophyll/generate.ts   (writes data/lakes.csv and data/samples.csv)
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import seedrandom from 'seedrandom';

const rand = seedrandom.alea('lake-chlorophyll-demo-v1');
const normal = () => {
  const u = Math.max(rand(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
};
const pick = <T>(xs: T[]) => xs[Math.floor(rand() * xs.length)];
const round = (x: number, d: number) => Number(x.toFixed(d));

const LAND = ['forest', 'farmland', 'urban', 'wetland'];
const LAND_TP: Record<string, number> = { forest: 12, farmland: 55, urban: 35, wetland: 22 };
const PREFIX = ['Alder', 'Birch', 'Crane', 'Dunmore', 'Eskel', 'Fallow', 'Glimmer', 'Heron', 'Ivel', 'Juniper'];
const SUFFIX = ['Mere', 'Pond', 'Water', 'Tarn'];

const lakes = Array.from({ length: 40 }, (_, i) => {
  const land = pick(LAND);
  return {
    lake_id: `LK${String(i + 1).padStart(3, '0')}`,
    lake_name: `${PREFIX[i % 10]} ${SUFFIX[Math.floor(i / 10)]}`,
    land_use: land,
    mean_depth_m: round(1.5 + rand() * 12, 1),
    area_ha: round(5 + Math.exp(2 + rand() * 4), 1),
    tp_base: LAND_TP[land] * Math.exp(0.5 * normal()),
    offset: 0.25 * normal(),
  };
});

const sampleLines = ['lake_id,sampled_on,sample_depth_m,water_temp_c,tp_ug_l,tn_ug_l,secchi_m,chl_ug_l'];
for (const lake of lakes) {
  for (let year = 2015; year <= 2024; year++) {
    const visits = 5 + Math.floor(rand() * 5);
    const warmYear = 1.2 * normal();
    for (let v = 0; v < visits; v++) {
      const doy = 152 + Math.floor(rand() * 100); // June to early September
      const date = new Date(Date.UTC(year, 0, 1) + (doy - 1) * 86400000).toISOString().slice(0, 10);
      const season = Math.sin(((doy - 152) / 100) * Math.PI);
      const temp = 14 + 9 * season + warmYear + 1.5 * normal() - lake.mean_depth_m * 0.15;
      const tp = lake.tp_base * Math.exp(0.35 * normal() + 0.2 * season);
      const tn = 300 + 9 * tp * Math.exp(0.3 * normal());
      // phosphorus response that saturates, growth that switches on above about 18 °C, deep lakes
      // that stay clearer in cool water, and a lasting offset per lake
      const growth = 1 / (1 + Math.exp(-(temp - 18) / 1.2));
      const deepAndCool = lake.mean_depth_m > 8 && temp < 17 ? 0.55 : 1;
      const chlMean = ((1.2 * tp ** 1.1) / (1 + tp / 45)) * (0.2 + 1.6 * growth) * deepAndCool * Math.exp(lake.offset);
      const chl = chlMean * Math.exp(0.22 * normal());
      const secchi = Math.min(8, 6 / (1 + 0.08 * chl) + 0.4 * rand());
      const depth = rand() < 0.06 ? round(2.5 + rand() * 4, 1) : round(0.5 + rand() * 1.2, 1);
      let tpText = String(round(tp, 1));
      let tempText = String(round(temp, 1));
      let chlText = String(round(chl, 2));
      let secchiText = String(round(secchi, 2));
      let tnText = String(Math.round(tn));
      const r = rand();
      if (r < 0.02) tpText = '-9999'; // logger sentinel
      else if (r < 0.03) tempText = '-9999';
      else if (r < 0.05) secchiText = ''; // not recorded
      else if (r < 0.06) tnText = 'NA';
      else if (r < 0.065) chlText = '';
      else if (r < 0.07) chlText = String(round(2500 + rand() * 4000, 1)); // transcription error, out of range
      sampleLines.push([lake.lake_id, date, depth, tempText, tpText, tnText, secchiText, chlText].join(','));
    }
  }
}

const lakeLines = ['lake_id,lake_name,land_use,mean_depth_m,area_ha'];
for (const l of lakes) lakeLines.push([l.lake_id, l.lake_name, l.land_use, l.mean_depth_m, l.area_ha].join(','));

const dir = join(dirname(fileURLToPath(import.meta.url)), 'data');
mkdirSync(dir, { recursive: true });
writeFileSync(join(dir, 'lakes.csv'), lakeLines.join('\n') + '\n');
writeFileSync(join(dir, 'samples.csv'), sampleLines.join('\n') + '\n');
process.stdout.write(`wrote ${lakes.length} lakes and ${sampleLines.length - 1} samples to ${dir}\n`);
