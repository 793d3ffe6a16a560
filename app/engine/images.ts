/** The preview and the crops live in core (the CLI's HTML report makes the same pictures). */
export * from '../../core/report/pictures.ts';
