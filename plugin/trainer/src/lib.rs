pub mod corpus;
