global using Microsoft.Extensions.DependencyInjection;
