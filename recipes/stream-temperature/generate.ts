/**
 * Generates the invented data of the stream-temperature demo: a daily grid of near-surface air
 * temperature and precipitation over an invented valley (a NetCDF-4 file, written by Unidata's
 * ncgen from CDL text made here), and water-temperature samples at twenty-four invented river
 * stations, each lying in one grid cell. Every station, name and number is made up; water follows
 * air temperature with a lag-free, damped, saturating response, cooled by shade, large flow and rain.
 *
 * Run: npx tsx recipes/stream-temperature/generate.ts   (needs ncgen: apt-get install netcdf-bin;
 * writes data/air.nc and data/samples.csv)
 */
import { execFileSync } from 'node:child_process';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import seedrandom from 'seedrandom';

const rand = seedrandom.alea('stream-temperature-demo-v1');
const normal = () => {
  const u = Math.max(rand(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rand());
};
const round = (x: number, d: number) => Number(x.toFixed(d));

const LATS = Array.from({ length: 7 }, (_, i) => 46 + 0.25 * i);
const LONS = Array.from({ length: 9 }, (_, i) => 7 + 0.25 * i);
const START = Date.UTC(2019, 0, 1);
const DAYS = 731; // 2019-01-01 to 2020-12-31
const DAY_MS = 86_400_000;
/** tas is packed as a short: K = raw × 0.01 + 273.15; -32767 marks a missing cell-day. */
const SCALE = 0.01;
const OFFSET = 273.15;
const FILL = -32767;

// air temperature: a seasonal cycle, colder to the north and east (uphill), and weather shared by
// the valley with a little local noise; rain falls on about a third of days
const tas: number[] = [];
const pr: number[] = [];
const airC: number[][][] = [];
let weather = 0;
for (let t = 0; t < DAYS; t++) {
  weather = 0.8 * weather + 1.6 * normal();
  const season = 9 - 11 * Math.cos((2 * Math.PI * (t - 15)) / 365.25);
  const wet = rand() < 0.35;
  const storm = wet ? Math.exp(1 + 0.8 * normal()) : 0;
  airC.push([]);
  for (let a = 0; a < LATS.length; a++) {
    airC[t].push([]);
    for (let o = 0; o < LONS.length; o++) {
      const c = season + weather - 0.8 * a - 0.4 * o + 0.6 * normal();
      airC[t][a].push(c);
      const gap = rand() < 0.002; // a sensor gap: the cell-day is missing
      tas.push(gap ? FILL : Math.round((c + 273.15 - OFFSET) / SCALE));
      pr.push(round(wet ? storm * (0.7 + 0.6 * rand()) : 0, 2));
    }
  }
}

const cdl = `netcdf air {
dimensions:
	time = UNLIMITED ;
	lat = ${LATS.length} ;
	lon = ${LONS.length} ;
variables:
	double time(time) ;
		time:units = "days since 2019-01-01" ;
		time:calendar = "standard" ;
		time:standard_name = "time" ;
	float lat(lat) ;
		lat:units = "degrees_north" ;
	float lon(lon) ;
		lon:units = "degrees_east" ;
	short tas(time, lat, lon) ;
		tas:standard_name = "air_temperature" ;
		tas:units = "K" ;
		tas:scale_factor = ${SCALE} ;
		tas:add_offset = ${OFFSET} ;
		tas:_FillValue = ${FILL}s ;
		tas:_DeflateLevel = 4 ;
	float pr(time, lat, lon) ;
		pr:standard_name = "precipitation_amount" ;
		pr:units = "mm day-1" ;
		pr:_FillValue = -999.f ;
		pr:_DeflateLevel = 4 ;

// global attributes:
		:Conventions = "CF-1.8" ;
		:title = "Invented daily air temperature and precipitation over an invented valley (dendrolog demo)" ;
data:
 time = ${Array.from({ length: DAYS }, (_, t) => t).join(', ')} ;
 lat = ${LATS.join(', ')} ;
 lon = ${LONS.join(', ')} ;
 tas = ${tas.map((v) => (v === FILL ? '_' : String(v))).join(', ')} ;
 pr = ${pr.join(', ')} ;
}
`;

const RIVERS = ['Arlen', 'Brisk', 'Corrie', 'Dovey', 'Elwy'];
const stations = Array.from({ length: 24 }, (_, i) => ({
  station_id: `ST${String(i + 1).padStart(2, '0')}`,
  name: `${RIVERS[i % 5]} ${Math.floor(i / 5) + 1}`,
  a: Math.floor(rand() * LATS.length),
  o: Math.floor(rand() * LONS.length),
  canopy: round(5 + rand() * 80, 0),
  baseFlow: Math.exp(0.5 + 2 * rand()),
  offset: 0.8 * normal(),
}));

const lines = ['station_id,time,lat,lon,flow_m3s,canopy_pct,water_temp_c'];
for (const s of stations) {
  for (let t = Math.floor(rand() * 9); t < DAYS; t += 7 + Math.floor(rand() * 7)) {
    const air = airC[t][s.a][s.o];
    const rain = pr[(t * LATS.length + s.a) * LONS.length + s.o];
    const flow = s.baseFlow * Math.exp(0.35 * normal() + 0.04 * rain);
    // water warms with air but saturates and never freezes solid; shade, flow and rain cool it
    const warm = 0.5 + 19 / (1 + Math.exp(-(air - 11) / 5.5));
    const water = Math.max(0.1, 2 + warm - 0.02 * s.canopy - 1.2 * Math.log10(flow) - 0.05 * rain + s.offset + 0.6 * normal());
    const day = new Date(START + t * DAY_MS).toISOString().slice(0, 10);
    const missingWater = rand() < 0.01;
    lines.push([s.station_id, day, LATS[s.a], LONS[s.o], round(flow, 2), s.canopy, missingWater ? 'NA' : round(water, 2)].join(','));
  }
}

const here = dirname(fileURLToPath(import.meta.url));
const data = join(here.replace(/[\\/]dist[\\/]recipes[\\/]/, '/recipes/'), 'data');
mkdirSync(data, { recursive: true });
writeFileSync(join(data, 'samples.csv'), lines.join('\n') + '\n');
const cdlPath = join(data, 'air.cdl.tmp');
writeFileSync(cdlPath, cdl);
try {
  execFileSync('ncgen', ['-k', 'netCDF-4', '-o', join(data, 'air.nc'), cdlPath]);
} finally {
  rmSync(cdlPath, { force: true });
}
console.log(`wrote ${lines.length - 1} samples at ${stations.length} stations and a ${DAYS} × ${LATS.length} × ${LONS.length} grid to ${data}`);
