/**
 * Who and what the invented demo fab is made of. Every name here is made up for the demo.
 */
import type { DemoScenario } from './types';

export const FAB: DemoScenario['fab'] = {
	code: 'WRF1',
	name: 'Wrenfield Fab 1',
	site: 'Wrenfield Park, Building C',
	timeZone: 'Europe/Vienna'
};

export const AREAS: DemoScenario['areas'] = [
	{ code: 'DE', name: 'Dielectric Etch' },
	{ code: 'CE', name: 'Conductor Etch' },
	{ code: 'ST', name: 'Strip' }
];

/** Tools: area, model, chamber letters and the recipe their chambers run. */
export const TOOL_PLAN: readonly {
	code: string;
	name: string;
	areaCode: string;
	model: string;
	letters: string;
	recipe: string;
}[] = [
	{
		code: 'DE01',
		name: 'Dielectric etcher 1',
		areaCode: 'DE',
		model: 'CCP dielectric etch, type D3',
		letters: 'ABC',
		recipe: 'OXV-22'
	},
	{
		code: 'DE02',
		name: 'Dielectric etcher 2',
		areaCode: 'DE',
		model: 'CCP dielectric etch, type D3',
		letters: 'ABC',
		recipe: 'OXV-22'
	},
	{
		code: 'DE03',
		name: 'Dielectric etcher 3',
		areaCode: 'DE',
		model: 'CCP dielectric etch, type D3',
		letters: 'ABC',
		recipe: 'OXV-22'
	},
	{
		code: 'CE01',
		name: 'Conductor etcher 1',
		areaCode: 'CE',
		model: 'ICP conductor etch, type C3',
		letters: 'ABC',
		recipe: 'PGE-14'
	},
	{
		code: 'CE02',
		name: 'Conductor etcher 2',
		areaCode: 'CE',
		model: 'ICP conductor etch, type C3',
		letters: 'ABC',
		recipe: 'PGE-14'
	},
	{
		code: 'CE03',
		name: 'Conductor etcher 3',
		areaCode: 'CE',
		model: 'ICP conductor etch, type C3',
		letters: 'ABC',
		recipe: 'PGE-14'
	},
	{
		code: 'ST01',
		name: 'Strip tool 1',
		areaCode: 'ST',
		model: 'ICP resist strip, type S4',
		letters: 'ABCD',
		recipe: 'PRS-60'
	},
	{
		code: 'ST02',
		name: 'Strip tool 2',
		areaCode: 'ST',
		model: 'ICP resist strip, type S4',
		letters: 'ABCD',
		recipe: 'PRS-60'
	}
];

export const PEOPLE: DemoScenario['people'] = [
	{ username: 'hlindqvist', displayName: 'Hanna Lindqvist', role: 'admin' },
	{ username: 'dokafor', displayName: 'Daniel Okafor', role: 'engineer' },
	{ username: 'mtanaka', displayName: 'Mei Tanaka', role: 'engineer' },
	{ username: 'rduarte', displayName: 'Rafael Duarte', role: 'engineer' },
	{ username: 'ikowalczyk', displayName: 'Iwona Kowalczyk', role: 'engineer' },
	{ username: 'sbrenner', displayName: 'Sofia Brenner', role: 'viewer' },
	{ username: 'kmensah', displayName: 'Kwame Mensah', role: 'viewer' }
];

/** Equipment staff who log the cleans (usernames of PEOPLE). */
export const TECHNICIANS = ['rduarte', 'ikowalczyk'] as const;

/** The chambers the episodes happen on (fixed, so the README can name them). */
export const EPISODE_CHAMBERS = {
	o2Drift: 'DE02-B',
	airLeak: 'DE03-A',
	heLeak: 'CE01-C',
	partSwap: 'CE03-A',
	rfMatch: 'CE03-B'
} as const;

export const WET_CLEAN_COMMENTS = [
	'Periodic wet clean: window, liner and showerhead wiped; leak-up rate in spec.',
	'Scheduled wet clean; viewport replaced with a cleaned spare; pump-down and leak check passed.',
	'Wet clean per schedule; chamber walls and window cleaned, seasoning wafers to follow.',
	'Routine wet clean; O-rings inspected, leak-up rate in spec.'
];
