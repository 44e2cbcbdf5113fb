import { createContext } from 'svelte';

/** What a FilterBar tells the fields inside it: whether it sits in a card header (small controls). */
export interface FilterBarLook {
	readonly compact: boolean;
}

export const [getFilterBarLook, setFilterBarLook] = createContext<FilterBarLook>();
