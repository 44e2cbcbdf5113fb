/** Deep links into Lockstep for mails: absolute, from ORIGIN (env.ts), on the app's own routes. */
import { mailOrigin } from './env.ts';

const abs = (path: string) => `${mailOrigin()}${path}`;
const q = encodeURIComponent;

export const mailLinks = {
	home: () => abs('/'),
	alarm: (id: number) => abs(`/alarms/${id}`),
	alarmsAcknowledged: () => abs('/alarms?state=acknowledged'),
	openAlarms: (chamber?: string) => abs(`/alarms?state=open${chamber ? `&chamber=${q(chamber)}` : ''}`),
	chamber: (code: string) => abs(`/chambers/${q(code)}`),
	wafer: (waferStepId: number) => abs(`/wafers/${waferStepId}`),
	fleetStep: (recipeStepId: number) => abs(`/fleet?step=${recipeStepId}`),
	baselines: (chamber: string) => abs(`/baselines?chamber=${q(chamber)}`),
	maintenance: () => abs('/maintenance'),
	mailSettings: () => abs('/account/mail')
};
