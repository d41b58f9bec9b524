import { readFileSync } from 'node:fs';
import avro from 'avsc';

// Daily weather in Seattle 2012–2015 from the NOAA National Climatic Data Center's daily records, as
// shipped by the vega-datasets npm package (data/seattle-weather.csv, a U.S. Government work).
// 1,461 days; "snow" is the rare class (26 days, ~1.8 %).

const DAY_MS = 86_400_000;

export const seattleWeatherSchema = {
  type: 'record',
  name: 'DailyWeather',
  namespace: 'test.raretide.opendata',
  fields: [
    { name: 'date', type: { type: 'int', logicalType: 'date' } },
    { name: 'precipitation', type: 'double' },
    { name: 'temp_max', type: 'double' },
    { name: 'temp_min', type: 'double' },
    { name: 'wind', type: 'double' },
    { name: 'weather', type: { type: 'enum', name: 'Weather', symbols: ['drizzle', 'rain', 'sun', 'snow', 'fog'] } },
  ],
} as const;

export type WeatherDay = {
  readonly date: number;
  readonly precipitation: number;
  readonly temp_max: number;
  readonly temp_min: number;
  readonly wind: number;
  readonly weather: string;
};

/** Every row of the CSV as a record of `seattleWeatherSchema` (dates as days since the epoch). */
export function seattleWeatherRows(): WeatherDay[] {
  const file = new URL('../../../node_modules/vega-datasets/data/seattle-weather.csv', import.meta.url);
  const lines = readFileSync(file, 'utf8').trim().split('\n');
  return lines.slice(1).map((line) => {
    const [date, precipitation, tempMax, tempMin, wind, weather] = line.split(',');
    const [year, month, day] = date!.split('-').map(Number);
    return {
      date: Date.UTC(year!, month! - 1, day!) / DAY_MS,
      precipitation: Number(precipitation),
      temp_max: Number(tempMax),
      temp_min: Number(tempMin),
      wind: Number(wind),
      weather: weather!,
    };
  });
}

export const seattleWeatherType: avro.Type = avro.Type.forSchema(seattleWeatherSchema as unknown as avro.Schema);
