/** The lab's ingredient library, loaded once and shared by the formula pages. */
import { defineStore } from 'pinia';
import { computed, ref } from 'vue';
import type { Ingredient } from '@shared/schemas/formulas';
import { api } from '@/api/client';

export const useFormulasStore = defineStore('formulas', () => {
  const ingredients = ref<Ingredient[]>([]);
  const loaded = ref(false);
  const byId = computed(() => new Map(ingredients.value.map((i) => [i.id, i])));

  async function loadIngredients(force = false) {
    if (loaded.value && !force) return ingredients.value;
    ingredients.value = (await api.get<{ ingredients: Ingredient[] }>('/ingredients')).ingredients;
    loaded.value = true;
    return ingredients.value;
  }

  /** Puts a created or changed ingredient into the cache, keeping the list sorted by trade name. */
  function remember(i: Ingredient) {
    const list = ingredients.value.filter((x) => x.id !== i.id);
    list.push(i);
    list.sort((a, b) => a.tradeName.localeCompare(b.tradeName));
    ingredients.value = list;
  }

  return { ingredients, loaded, byId, loadIngredients, remember };
});
