// The indefinite article of a word from a declaration (a quantity's name), for messages: "an acceleration", "a strain".

// English takes "an" before a vowel sound (common practice); words spoken from a "you" or "wun" sound take "a".
export const withArticle = (word: string) => `${/^[aeiou]/i.test(word) && !/^(uni|use|usu|ura|ure|uro|eu|one)/i.test(word) ? 'an' : 'a'} ${word}`;
